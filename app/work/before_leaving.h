#pragma once
// The Before leaving list: what today's walk still lacks or should look at
// again while the crew is in the field, one line per cell (plot, trait,
// occasion) with every finding of that cell:
//   conflict - two live values for one cell
//   outlier  - an outlier plot of the interim analysis
//   flagged  - a saved value the entry checks would still ask to confirm
//   missing  - a cell of the walk with no record (a skip with a reason
//              counts as recorded; a withdrawn entry does not)
// Lines with a conflict come first, then values to check, then missing
// cells; each group in walk order. A finding the crew answered "the value is
// right" for (the row's confirmed checks: the entry check's key for a flagged
// value, "outlier" for an outlier) is not listed. Cells outside the walk are
// not listed: one line counts what they hold.

#include <string>
#include <vector>

#include "app/work/walk.h"
#include "storage/trial_store.h"

namespace furrow {

// The key a crew's "the value is right" records for an outlier plot.
inline constexpr const char* kOutlierCheck = "outlier";

struct LeavingItem {
  enum class Kind { conflict, outlier, flagged, missing };
  std::vector<Kind> kinds;   // every finding of the cell, most serious first
  size_t plot_index = 0;     // into trial.layout.plots
  size_t trait_index = 0;    // into trial.plan.traits
  int occasion = 1;
  std::string message;       // plain words, every finding
  bool has(Kind k) const;
};

struct BeforeLeaving {
  std::vector<LeavingItem> items;   // the walk's cells, one line each
  // Counted over the walk's cells.
  int missing = 0, flagged = 0, outliers = 0, conflicts = 0;
  // Cells outside the walk, in one line ("" when they hold nothing to say).
  std::string outside_walk;
};

BeforeLeaving before_leaving(const StoredTrial& trial, const std::vector<LiveObservation>& live, double alpha,
                             const Walk& walk);

}  // namespace furrow
