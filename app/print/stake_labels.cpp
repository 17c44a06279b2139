#include "app/print/stake_labels.h"

#include <cairo-pdf.h>
#include <cairo.h>
#include <qrencode.h>

#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <memory>

#include "core/stake_code.h"

namespace furrow {
namespace {

constexpr double kPointsPerMm = 72.0 / 25.4;
constexpr int kQuietModules = 4;   // the light margin a QR code needs on each side (ISO/IEC 18004)

struct QrDeleter {
  void operator()(QRcode* q) const { QRcode_free(q); }
};
using Qr = std::unique_ptr<QRcode, QrDeleter>;

Qr encode(const std::string& text) {
  return Qr(QRcode_encodeString8bit(text.c_str(), 0, QR_ECLEVEL_M));
}

// The QR code's side on a label: the label's height less a margin, at most
// half its width.
double qr_side_mm(const LabelSheet& s) { return std::min(s.label_height_mm - 4.0, s.label_width_mm * 0.5); }

// Text in the DejaVu Sans face at `size_mm`, cut with "..." to `width_mm`.
void text_line(cairo_t* cr, const std::string& text, double x_mm, double baseline_mm, double size_mm, double width_mm,
               bool bold) {
  cairo_select_font_face(cr, "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL, bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
  cairo_set_font_size(cr, size_mm * kPointsPerMm);
  std::string shown = text;
  cairo_text_extents_t e;
  cairo_text_extents(cr, shown.c_str(), &e);
  while (!shown.empty() && e.x_advance > width_mm * kPointsPerMm) {
    shown.pop_back();
    while (!shown.empty() && (static_cast<unsigned char>(shown.back()) & 0xC0) == 0x80) shown.pop_back();   // whole UTF-8 characters
    const std::string cut = shown + "...";
    cairo_text_extents(cr, cut.c_str(), &e);
    if (e.x_advance <= width_mm * kPointsPerMm) { shown = cut; break; }
  }
  cairo_move_to(cr, x_mm * kPointsPerMm, baseline_mm * kPointsPerMm);
  cairo_show_text(cr, shown.c_str());
}

double text_width_mm(cairo_t* cr, const std::string& text, double size_mm, bool bold = false) {
  cairo_select_font_face(cr, "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL, bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
  cairo_set_font_size(cr, size_mm * kPointsPerMm);
  cairo_text_extents_t e;
  cairo_text_extents(cr, text.c_str(), &e);
  return e.x_advance / kPointsPerMm;
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

double qr_module_mm(const LabelSheet& s, const std::string& code_text) {
  const Qr qr = encode(code_text);
  if (!qr) return 0;
  return qr_side_mm(s) / (qr->width + 2 * kQuietModules);
}

Status write_stake_labels(const StoredTrial& trial, const LabelSheet& s, bool blind, const std::string& out_path) {
  const std::string part = out_path + ".part";
  cairo_surface_t* surface =
      cairo_pdf_surface_create(part.c_str(), s.page_width_mm * kPointsPerMm, s.page_height_mm * kPointsPerMm);
  if (cairo_surface_status(surface) != CAIRO_STATUS_SUCCESS) {
    cairo_surface_destroy(surface);
    return make_problem("cannot write " + out_path + " (" + cairo_status_to_string(cairo_surface_status(surface)) + ")");
  }
  cairo_pdf_surface_set_metadata(surface, CAIRO_PDF_METADATA_TITLE, ("Stake labels: " + trial.plan.name).c_str());
  cairo_t* cr = cairo_create(surface);
  std::vector<const PlannedPlot*> plots;
  for (const PlannedPlot& p : trial.layout.plots) plots.push_back(&p);
  std::stable_sort(plots.begin(), plots.end(),
                   [](const PlannedPlot* a, const PlannedPlot* b) { return a->walk_order < b->walk_order; });
  const double pad = 2.0, side = qr_side_mm(s);
  std::string failure;
  int page = 0;
  for (size_t i = 0; i < plots.size() && failure.empty(); ++i) {
    const PlannedPlot& p = *plots[i];
    const LabelPlace at = label_place(s, static_cast<int>(i));
    if (at.page != page) {
      cairo_show_page(cr);
      page = at.page;
    }
    const std::string code = stake_code_text({trial.uid, trial.plan.name, p.label});
    const Qr qr = encode(code);
    if (!qr) {
      failure = "cannot make the QR code of plot " + p.label;
      break;
    }
    // The QR code, dark modules as squares, with its quiet zone inside the label.
    const double module = side / (qr->width + 2 * kQuietModules);
    const double qx = at.x_mm + pad, qy = at.y_mm + (s.label_height_mm - side) / 2;
    cairo_set_source_rgb(cr, 0, 0, 0);
    for (int y = 0; y < qr->width; ++y)
      for (int x = 0; x < qr->width; ++x)
        if (qr->data[y * qr->width + x] & 1)
          cairo_rectangle(cr, (qx + (x + kQuietModules) * module) * kPointsPerMm,
                          (qy + (y + kQuietModules) * module) * kPointsPerMm, module * kPointsPerMm,
                          module * kPointsPerMm);
    cairo_fill(cr);
    // The words, right of the code.
    const double tx = qx + side + 1.0, tw = at.x_mm + s.label_width_mm - pad - tx;
    const double h = s.label_height_mm;
    const double small = std::max(2.0, std::min(h * 0.095, 3.4));
    // The plot label whole, as large as the room allows (never cut short).
    double big = std::min(h * 0.3, 14.0);
    while (big > small && text_width_mm(cr, p.label, big, true) > tw) big *= 0.92;
    double y = at.y_mm + pad + big * 0.8;
    text_line(cr, p.label, tx, y, big, tw, true);
    y += small * 1.5;
    text_line(cr, trial.plan.name, tx, y, small, tw, false);
    y += small * 1.3;
    // Block, row and column on one line when they fit, else on two.
    std::string block = "block " + std::to_string(p.block);
    if (!trial.plan.sites.empty() && p.site >= 0 && p.site < static_cast<int>(trial.plan.sites.size()))
      block = trial.plan.sites[p.site] + ", " + block;
    const std::string spot = "row " + std::to_string(p.row) + ", col " + std::to_string(p.column);
    if (text_width_mm(cr, block + ", " + spot, small) <= tw) {
      text_line(cr, block + ", " + spot, tx, y, small, tw, false);
    } else {
      text_line(cr, block, tx, y, small, tw, false);
      y += small * 1.3;
      text_line(cr, spot, tx, y, small, tw, false);
    }
    if (!blind && !p.levels.empty()) {
      std::string entry;
      for (size_t k = 0; k < p.levels.size() && k < trial.plan.factors.size(); ++k)
        entry += (k ? " x " : "") + trial.plan.factors[k].levels[p.levels[k]];
      y += small * 1.3;
      text_line(cr, entry, tx, y, small, tw, false);
    }
  }
  cairo_show_page(cr);
  cairo_destroy(cr);
  cairo_surface_finish(surface);
  const cairo_status_t status = cairo_surface_status(surface);
  cairo_surface_destroy(surface);
  std::error_code ec;
  if (!failure.empty() || status != CAIRO_STATUS_SUCCESS) {
    std::filesystem::remove(part, ec);
    return make_problem(out_path + ": " + (failure.empty() ? std::string(cairo_status_to_string(status)) : failure) +
                        "; nothing was written");
  }
  std::filesystem::rename(part, out_path, ec);
  if (ec) return make_problem("cannot write " + out_path + ": " + ec.message());
  return ok_status();
}

}  // namespace furrow
