#pragma once
// The walk as a printed field sheet (PDF through cairo): one line per plot in
// walk order with an empty box per chosen trait and one for a note, the
// traits' units and usual ranges in the table head, and on every page the
// trial's name, site and season, the date printed, blanks for the date
// walked and the observer, and "page k of n". Typed back, the sheet is a CSV
// whose columns are the codes printed in the table head (app/work/sheet_entry.h).

#include <string>
#include <vector>

#include "core/result.h"
#include "storage/trial_store.h"

namespace furrow {

struct SheetPaper {
  std::string key;      // "a4", "letter"
  double width_mm = 0, height_mm = 0;   // portrait
};
Result<SheetPaper> sheet_paper(const std::string& key);

// Today's date on this device's clock, YYYY-MM-DD (the "printed" date).
std::string local_date_today();

struct FieldSheetRequest {
  std::vector<size_t> traits;   // trait indexes, in the order printed
  int occasion = 1;             // for repeated traits
  bool blind = false;           // leave the treatment columns off
  std::string printed_on;       // "2026-12-02"
};

// Where things go: computed once, drawn on every page (the tests measure it).
struct FieldSheetLayout {
  bool landscape = false;
  double page_width_mm = 0, page_height_mm = 0;
  double table_top_mm = 0;      // the table head's top edge
  double head_height_mm = 0, row_height_mm = 0;
  int rows_per_page = 0, pages = 0;
  struct Column {
    enum class Holds { plot, site, block, row, column, factor, value, note } holds = Holds::plot;
    size_t factor = 0;          // Holds::factor: which
    std::string title;          // printed in the head (a trait: its code, the CSV column)
    std::string detail;         // unit, usual range, how it is written
    double x_mm = 0, width_mm = 0;
    bool value_box = false;     // left empty for the crew
  };
  std::vector<Column> columns;
};
// Refused (in words) when the chosen traits do not fit across the page even
// in landscape, or the occasion is not one of a trait's.
Result<FieldSheetLayout> field_sheet_layout(const StoredTrial& trial, const SheetPaper& paper, const FieldSheetRequest& request);

// Writes the sheet (to a temporary file, then renamed). Returns the layout used.
Result<FieldSheetLayout> write_field_sheet(const StoredTrial& trial, const SheetPaper& paper,
                                           const FieldSheetRequest& request, const std::string& out_path);

}  // namespace furrow
