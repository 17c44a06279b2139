#pragma once
// A field sheet typed back from paper: a CSV file, one line per plot, taken
// through the same entry checks as the Record screen (RecordSession), value
// by value, in the file's order.
//
// The file (the blank one `furrow sheets --csv` writes has exactly these
// columns, in walk order):
//   plot                    the stake label (a scanned stake code is read too)
//   site, block, field_row, field_column, and one column per treatment
//                           factor (e.g. entry): optional; when a cell holds
//                           text it must match the plan, else the whole line
//                           is refused (the wrong plot was written down)
//   <trait code>            one per trait on the sheet; `<code>_<n>` for
//                           occasion n of a repeated trait (plain code:
//                           the sheet's occasion)
//   note                    optional: a note saved with the line's first value
// A value cell holds the value as the crew wrote it, or "missing: <reason>"
// for a plot with no value, or nothing (not measured: nothing is saved).
//
// Rules (the tests refer to them):
//   S1. The header is checked before anything is saved: a column that is
//       neither one of the above nor known names the file, line 1 and field.
//   S2. A line whose plot is not in the plan, or whose place or entry does
//       not match it, saves nothing; the other lines go on.
//   S3. A plot on several lines: a value written the same on each is saved
//       once; values that differ are saved from none of them (the paper
//       must be looked at). Later lines never save anything of their own.
//   S4. A cell that already holds the same value (this file entered before,
//       or the tablet saved it) saves nothing: entering a sheet twice saves
//       each value once.
//   S5. A cell that holds a different value is replaced only when the
//       replacement is confirmed (asked like any confirmation).
//   S6. Every value goes through RecordSession's checks: refused values are
//       not saved; values needing confirmation are saved only when confirmed
//       (the `confirm` set or the `ask` answer), or as the suggested value
//       of a likely slip when that is chosen; otherwise left unsaved and
//       listed.

#include <functional>
#include <set>
#include <string>
#include <utility>
#include <vector>

#include "app/work/record_session.h"

namespace furrow {

struct SheetItem {
  enum class Kind {
    saved,          // saved as written
    confirmed,      // saved as written after a confirmation
    suggestion,     // saved as the suggested value of a likely slip
    already_saved,  // S4
    waiting,        // needs confirmation, not given: not saved
    refused,        // S2, S3, S6: not saved
    duplicate,      // S3: a later line of the same plot
  };
  Kind kind = Kind::refused;
  int line = 0;
  std::string plot;
  std::string column;   // the value's column ("height_cm"), empty for a whole line
  std::string text;     // the value as written
  std::string message;  // plain words: what happened and why
  std::string suggestion;   // a likely slip's value, when offered
};
const char* sheet_item_key(SheetItem::Kind k);

// What the person entering the sheet chose for a value that needs
// confirmation (or, for a refused likely slip, its suggestion).
enum class SheetAnswer { leave, save_as_written, save_suggestion };

struct SheetQuestion {
  int line = 0;
  std::string plot, column, text;
  std::string message;        // the checks' words
  std::string suggestion;     // offered when not empty
  bool can_confirm = true;    // false: refused, only the suggestion may be saved
};

struct SheetOptions {
  int occasion = 1;   // for plain trait-code columns
  // Values to save as written when they need confirmation: (line, column);
  // column "*" for every value of the line.
  std::set<std::pair<int, std::string>> confirm;
  // Asked for each value that needs confirmation and is not in `confirm`
  // (a terminal prompt); empty: such values are left unsaved.
  std::function<SheetAnswer(const SheetQuestion&)> ask;
};

struct SheetResult {
  std::vector<SheetItem> items;   // in file order
  int count(SheetItem::Kind k) const;
};

// Enters the sheet at `path` into the session's trial. A problem (nothing
// saved) when the file cannot be read or its header is wrong (S1); else the
// result of every value and line.
Result<SheetResult> enter_sheet(RecordSession& session, const std::string& path, const SheetOptions& options);

// The blank sheet to type into: the columns above in walk order, one line per
// plot, the value cells empty. Factor columns are left out when `blind`.
std::string blank_sheet_csv(const StoredTrial& trial, const std::vector<std::string>& trait_columns, bool blind);

// The column name of a trait on a sheet: its code, or code_<occasion> for a
// repeated trait.
std::string sheet_column(const Trait& trait, int occasion);

}  // namespace furrow
