#include "app/print/pdf_pages.h"

#include <cairo-pdf.h>
#include <cairo.h>

#include <filesystem>

#include "storage/text_file.h"

namespace furrow {

PdfPages::PdfPages(const std::string& out_path, double width_mm, double height_mm, const std::string& title)
    : out_(out_path), part_(out_path + ".part") {
  if (auto ok = check_output_file(out_path); !ok) {
    refused_ = ok.problem().message;
    part_ = "/dev/null";   // nothing of ours is written
  }
  surface_ = cairo_pdf_surface_create(part_.c_str(), width_mm * kPointsPerMm, height_mm * kPointsPerMm);
  if (cairo_surface_status(surface_) != CAIRO_STATUS_SUCCESS) return;
  cairo_pdf_surface_set_metadata(surface_, CAIRO_PDF_METADATA_TITLE, title.c_str());
  cr_ = cairo_create(surface_);
}

PdfPages::~PdfPages() {
  if (!finished_) finish("not finished");
}

Status PdfPages::status() const {
  if (!refused_.empty()) return make_problem(refused_);
  if (cairo_surface_status(surface_) != CAIRO_STATUS_SUCCESS)
    return make_problem("cannot write " + out_ + " (" + cairo_status_to_string(cairo_surface_status(surface_)) + ")");
  return ok_status();
}

void PdfPages::next_page() { cairo_show_page(cr_); }

Status PdfPages::finish(const std::string& failure) {
  if (finished_) return ok_status();
  finished_ = true;
  if (cr_) {
    cairo_show_page(cr_);
    cairo_destroy(cr_);
  }
  cairo_surface_finish(surface_);
  const cairo_status_t status = cairo_surface_status(surface_);
  cairo_surface_destroy(surface_);
  std::error_code ec;
  if (!refused_.empty()) return make_problem(refused_);
  if (!failure.empty() || status != CAIRO_STATUS_SUCCESS) {
    std::filesystem::remove(part_, ec);
    return make_problem(out_ + ": " + (failure.empty() ? std::string(cairo_status_to_string(status)) : failure) +
                        "; nothing was written");
  }
  std::filesystem::rename(part_, out_, ec);
  if (ec) {
    std::filesystem::remove(part_, ec);
    return make_problem("cannot write " + out_ + ": " + ec.message());
  }
  return ok_status();
}

namespace {
void face(cairo_t* cr, double size_mm, bool bold) {
  cairo_select_font_face(cr, "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL, bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
  cairo_set_font_size(cr, size_mm * kPointsPerMm);
}
}  // namespace

void PdfPages::text(const std::string& s, double x_mm, double baseline_mm, double size_mm, double width_mm, bool bold) {
  face(cr_, size_mm, bold);
  std::string shown = s;
  cairo_text_extents_t e;
  cairo_text_extents(cr_, shown.c_str(), &e);
  while (!shown.empty() && e.x_advance > width_mm * kPointsPerMm) {
    // One whole UTF-8 character off the end: its continuation bytes, then its lead byte.
    while (!shown.empty() && (static_cast<unsigned char>(shown.back()) & 0xC0) == 0x80) shown.pop_back();
    if (!shown.empty()) shown.pop_back();
    const std::string cut = shown + "...";
    cairo_text_extents(cr_, cut.c_str(), &e);
    if (e.x_advance <= width_mm * kPointsPerMm) {
      shown = cut;
      break;
    }
  }
  cairo_set_source_rgb(cr_, 0, 0, 0);
  cairo_move_to(cr_, x_mm * kPointsPerMm, baseline_mm * kPointsPerMm);
  cairo_show_text(cr_, shown.c_str());
}

double PdfPages::text_width(const std::string& s, double size_mm, bool bold) {
  face(cr_, size_mm, bold);
  cairo_text_extents_t e;
  cairo_text_extents(cr_, s.c_str(), &e);
  return e.x_advance / kPointsPerMm;
}

void PdfPages::line(double x0, double y0, double x1, double y1, double width_mm) {
  cairo_set_source_rgb(cr_, 0, 0, 0);
  cairo_set_line_width(cr_, width_mm * kPointsPerMm);
  cairo_move_to(cr_, x0 * kPointsPerMm, y0 * kPointsPerMm);
  cairo_line_to(cr_, x1 * kPointsPerMm, y1 * kPointsPerMm);
  cairo_stroke(cr_);
}

void PdfPages::rectangle(double x, double y, double w, double h, double line_mm) {
  cairo_set_source_rgb(cr_, 0, 0, 0);
  cairo_set_line_width(cr_, line_mm * kPointsPerMm);
  cairo_rectangle(cr_, x * kPointsPerMm, y * kPointsPerMm, w * kPointsPerMm, h * kPointsPerMm);
  cairo_stroke(cr_);
}

void PdfPages::fill_rectangle(double x, double y, double w, double h, double grey) {
  cairo_set_source_rgb(cr_, grey, grey, grey);
  cairo_rectangle(cr_, x * kPointsPerMm, y * kPointsPerMm, w * kPointsPerMm, h * kPointsPerMm);
  cairo_fill(cr_);
}

}  // namespace furrow
