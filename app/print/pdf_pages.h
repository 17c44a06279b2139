#pragma once
// A PDF written page by page with cairo, in millimetres: the shared part of
// stake labels and field sheets. The file is written beside its name and
// renamed when finished, so a failure never leaves half a file in place of a
// good one. Text is DejaVu Sans (Debian fonts-dejavu-core), embedded by cairo.

#include <string>

#include "core/result.h"

typedef struct _cairo cairo_t;
typedef struct _cairo_surface cairo_surface_t;

namespace furrow {

inline constexpr double kPointsPerMm = 72.0 / 25.4;

class PdfPages {
 public:
  // Starts the PDF; check `status()` before drawing.
  PdfPages(const std::string& out_path, double width_mm, double height_mm, const std::string& title);
  ~PdfPages();
  PdfPages(const PdfPages&) = delete;
  PdfPages& operator=(const PdfPages&) = delete;

  Status status() const;
  cairo_t* cr() { return cr_; }
  void next_page();
  // Ends the page and the file and renames it into place; `failure` (not
  // empty) discards it instead and is the problem returned.
  Status finish(const std::string& failure = {});

  // Text at a baseline, cut with "..." to width_mm (whole UTF-8 characters).
  void text(const std::string& s, double x_mm, double baseline_mm, double size_mm, double width_mm, bool bold = false);
  double text_width(const std::string& s, double size_mm, bool bold = false);
  // A line or rectangle outline, in millimetres.
  void line(double x0, double y0, double x1, double y1, double width_mm);
  void rectangle(double x, double y, double w, double h, double line_mm);
  void fill_rectangle(double x, double y, double w, double h, double grey);

 private:
  std::string out_, part_;
  cairo_surface_t* surface_ = nullptr;
  cairo_t* cr_ = nullptr;
  bool finished_ = false;
  std::string refused_;   // the output path cannot be written: why
};

}  // namespace furrow
