#pragma once
// Stake labels as a PDF (cairo; QR codes by libqrencode): one label per plot
// in walk order, each with the plot label in large type, the trial's name,
// block, field row and column, the entry (none when scored blind) and a QR
// code holding the stake code (core/stake_code.h). Sizes are millimetres and
// the PDF prints at 100 %: a PDF point is 1/72 inch.

#include <string>
#include <vector>

#include "core/result.h"
#include "storage/trial_store.h"

namespace furrow {

struct LabelSheet {
  std::string key;                      // "a4-3x8", "letter-3x10", "roll-50x30"
  std::string title;                    // for people
  double page_width_mm = 0, page_height_mm = 0;
  int columns = 1, rows = 1;
  double label_width_mm = 0, label_height_mm = 0;
  double left_mm = 0, top_mm = 0;       // the first label's top-left corner
  double gap_x_mm = 0, gap_y_mm = 0;    // between labels
};

// The sheets offered: common label sheets (A4 3 x 8 of 70 x 37 mm; US Letter
// 3 x 10 of 66.7 x 25.4 mm: sizes of common stationery, from memory) and a
// thermal roll of one label a page, "roll-WxH" in millimetres (20-150).
std::vector<LabelSheet> label_sheets();
Result<LabelSheet> label_sheet(const std::string& key);

// Where label `index` (0-based, in walk order) sits: page, and its top-left
// corner on the page in millimetres.
struct LabelPlace {
  int page = 0;
  double x_mm = 0, y_mm = 0;
};
LabelPlace label_place(const LabelSheet& sheet, int index);

// The smallest QR module of the trial's labels on this sheet, in millimetres
// (the longest code has the finest modules). Labels whose modules would be
// under 0.30 mm are refused, as is a plot label that cannot be printed whole.
double qr_module_mm(const LabelSheet& sheet, const StoredTrial& trial);

// Writes the labels PDF (to a temporary file, then renamed).
Status write_stake_labels(const StoredTrial& trial, const LabelSheet& sheet, bool blind, const std::string& out_path);

}  // namespace furrow
