#pragma once
// Conflicts and their settlement. A conflict is a cell (plot, trait,
// occasion) with live rows that disagree - two devices recorded different
// values. It is listed until someone settles it: keep one of the rows, enter
// a new value, or mark the cell missing. The settlement is a new log row,
// by the settling person at the settling time, that replaces every live row
// of the cell; nothing is overwritten.

#include <optional>
#include <string>
#include <vector>

#include "storage/trial_store.h"

namespace furrow {

struct ConflictCell {
  size_t plot_index = 0, trait_index = 0;   // into trial.layout.plots / plan.traits
  int occasion = 1;
  std::vector<LiveObservation> rows;        // the disagreeing live rows, oldest first
};

// Every conflict of the trial, in walking order, then trait order.
Result<std::vector<ConflictCell>> list_conflicts(Database& db, const StoredTrial& trial);

struct Settlement {
  enum class Kind { keep, new_value, missing } kind = Kind::keep;
  ObservationKey keep;              // keep: the row whose value stands
  std::string value;                // new_value: already checked and normalised
  std::optional<double> number;     // new_value: its number, when the trait has one
  std::string missing_reason;       // missing
  std::string by;                   // who settles (not empty)
  std::string note;                 // why, in the settler's words (optional)
};

// Settles one cell with one new row; fails (saving nothing) when the cell
// is no longer in conflict or the kept row is not one of its live rows.
Result<ObservationKey> settle_conflict(Database& db, const StoredTrial& trial, const ConflictCell& cell,
                                       const Settlement& settlement);

}  // namespace furrow
