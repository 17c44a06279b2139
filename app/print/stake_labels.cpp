#include "app/print/stake_labels.h"

#include <cairo.h>
#include <qrencode.h>

#include <algorithm>
#include <cstdio>
#include <memory>

#include "app/print/pdf_pages.h"
#include "core/stake_code.h"

namespace furrow {
namespace {

constexpr int kQuietModules = 4;
constexpr double kMinModuleMm = 0.30;    // the smallest module the tests read back at 300 dpi (0.31 mm)
constexpr double kMinLabelTypeMm = 1.6;  // about 4.5 pt: the smallest plot label still read by eye   // the light margin a QR code needs on each side (ISO/IEC 18004)

struct QrDeleter {
  void operator()(QRcode* q) const { QRcode_free(q); }
};
using Qr = std::unique_ptr<QRcode, QrDeleter>;

Qr encode(const std::string& text) {
  return Qr(QRcode_encodeString8bit(text.c_str(), 0, QR_ECLEVEL_M));
}

// A tall label (a roll label standing up) has its code above the words.
bool tall(const LabelSheet& s) { return s.label_height_mm > s.label_width_mm * 1.3; }

// The QR code's side on a label: beside the words, the label's height less a
// margin, at most half its width; above them, the width less a margin, at
// most half the height.
double qr_side_mm(const LabelSheet& s) {
  return tall(s) ? std::min(s.label_width_mm - 4.0, s.label_height_mm * 0.5)
                 : std::min(s.label_height_mm - 4.0, s.label_width_mm * 0.5);
}

}  // namespace

std::vector<LabelSheet> label_sheets() {
  return {{"a4-3x8", "A4, 3 x 8 labels of 70 x 37 mm", 210, 297, 3, 8, 70, 37, 0, 0.5, 0, 0},
          {"letter-3x10", "US Letter, 3 x 10 labels of 66.7 x 25.4 mm", 215.9, 279.4, 3, 10, 66.7, 25.4, 4.8, 12.7, 3.2, 0},
          {"roll-50x30", "thermal roll, one 50 x 30 mm label a page", 50, 30, 1, 1, 50, 30, 0, 0, 0, 0}};
}

Result<LabelSheet> label_sheet(const std::string& key) {
  for (const LabelSheet& s : label_sheets())
    if (s.key == key) return s;
  double w = 0, h = 0;
  char tail = 0;
  if (std::sscanf(key.c_str(), "roll-%lfx%lf%c", &w, &h, &tail) == 2) {
    if (w < 20 || h < 20 || w > 150 || h > 150)
      return make_problem("a roll label is 20 to 150 mm each way (asked: " + key + ")");
    char title[96];
    std::snprintf(title, sizeof title, "thermal roll, one %g x %g mm label a page", w, h);
    return LabelSheet{key, title, w, h, 1, 1, w, h, 0, 0, 0, 0};
  }
  std::string known;
  for (const LabelSheet& s : label_sheets()) known += (known.empty() ? "" : ", ") + s.key;
  return make_problem("no label sheet '" + key + "' (choose " + known + ", or roll-WxH in millimetres)");
}

LabelPlace label_place(const LabelSheet& s, int index) {
  const int per_page = s.columns * s.rows;
  const int on_page = index % per_page;
  const int row = on_page / s.columns, column = on_page % s.columns;
  return {index / per_page, s.left_mm + column * (s.label_width_mm + s.gap_x_mm),
          s.top_mm + row * (s.label_height_mm + s.gap_y_mm)};
}

double qr_module_mm(const LabelSheet& s, const StoredTrial& trial) {
  double smallest = 1e9;
  for (const PlannedPlot& p : trial.layout.plots) {
    const Qr qr = encode(stake_code_text({trial.uid, trial.plan.name, p.label}));
    if (!qr) return 0;
    smallest = std::min(smallest, qr_side_mm(s) / (qr->width + 2 * kQuietModules));
  }
  return smallest;
}

Status write_stake_labels(const StoredTrial& trial, const LabelSheet& s, bool blind, const std::string& out_path) {
  // Codes too fine to be read are refused before anything is written.
  if (const double module = qr_module_mm(s, trial); module < kMinModuleMm) {
    char words[200];
    std::snprintf(words, sizeof words, "the QR codes would have modules of %.2f mm on %s labels; they need at least "
                  "%.2f mm to be read: choose a larger label", module, s.key.c_str(), kMinModuleMm);
    return make_problem(words);
  }
  PdfPages pdf(out_path, s.page_width_mm, s.page_height_mm, "Stake labels: " + trial.plan.name);
  if (auto st = pdf.status(); !st) return st;
  cairo_t* cr = pdf.cr();
  const double pad = 2.0, side = qr_side_mm(s);
  int page = 0;
  // trial.layout.plots is in walk order.
  for (size_t i = 0; i < trial.layout.plots.size(); ++i) {
    const PlannedPlot& p = trial.layout.plots[i];
    const LabelPlace at = label_place(s, static_cast<int>(i));
    if (at.page != page) {
      pdf.next_page();
      page = at.page;
    }
    const std::string code = stake_code_text({trial.uid, trial.plan.name, p.label});
    const Qr qr = encode(code);
    if (!qr) return pdf.finish("cannot make the QR code of plot " + p.label);
    // The QR code, dark modules as squares, with its quiet zone inside the label.
    const double module = side / (qr->width + 2 * kQuietModules);
    const double qx = tall(s) ? at.x_mm + (s.label_width_mm - side) / 2 : at.x_mm + pad;
    const double qy = tall(s) ? at.y_mm + pad : at.y_mm + (s.label_height_mm - side) / 2;
    cairo_set_source_rgb(cr, 0, 0, 0);
    for (int y = 0; y < qr->width; ++y)
      for (int x = 0; x < qr->width; ++x)
        if (qr->data[y * qr->width + x] & 1)
          cairo_rectangle(cr, (qx + (x + kQuietModules) * module) * kPointsPerMm,
                          (qy + (y + kQuietModules) * module) * kPointsPerMm, module * kPointsPerMm,
                          module * kPointsPerMm);
    cairo_fill(cr);
    // The words, right of the code (below it on a tall label).
    const double tx = tall(s) ? at.x_mm + pad : qx + side + 1.0;
    const double tw = at.x_mm + s.label_width_mm - pad - tx;
    const double h = tall(s) ? s.label_height_mm - side - pad : s.label_height_mm;
    const double small = std::max(2.0, std::min(h * 0.095, 3.4));
    // The plot label whole, as large as the room allows: never cut short; a
    // label too long for the sticker at the smallest readable type is refused.
    double big = std::min(h * 0.3, 14.0);
    while (big > kMinLabelTypeMm && pdf.text_width(p.label, big, true) > tw) big = std::max(kMinLabelTypeMm, big * 0.92);
    if (pdf.text_width(p.label, big, true) > tw)
      return pdf.finish("plot label '" + p.label + "' does not fit whole on a " + s.key +
                        " label even in small type; choose a larger label");
    double y = (tall(s) ? qy + side + 1.0 : at.y_mm + pad) + big * 0.8;
    pdf.text(p.label, tx, y, big, tw, true);
    y += small * 1.5;
    pdf.text(trial.plan.name, tx, y, small, tw);
    y += small * 1.3;
    // Block, row and column on one line when they fit, else on two.
    std::string block = "block " + std::to_string(p.block);
    if (!trial.plan.sites.empty() && p.site >= 0 && p.site < static_cast<int>(trial.plan.sites.size()))
      block = trial.plan.sites[p.site] + ", " + block;
    const std::string spot = "row " + std::to_string(p.row) + ", col " + std::to_string(p.column);
    if (pdf.text_width(block + ", " + spot, small) <= tw) {
      pdf.text(block + ", " + spot, tx, y, small, tw);
    } else {
      pdf.text(block, tx, y, small, tw);
      y += small * 1.3;
      pdf.text(spot, tx, y, small, tw);
    }
    if (!blind && !p.levels.empty()) {
      y += small * 1.3;
      pdf.text(treatment_label(trial.plan, p.levels), tx, y, small, tw);
    }
  }
  return pdf.finish();
}

}  // namespace furrow
