#pragma once
// The Before leaving list: everything to fix while the crew is still in the
// field, from the trial's current log:
//   missing  - a required value with no record (a skip with a reason counts
//              as recorded; a withdrawn entry does not)
//   flagged  - a saved value the entry checks would still ask to confirm
//   outlier  - an outlier plot of the interim analysis
//   conflict - two live values for one cell
// A flagged value or an outlier whose record carries the note "confirmed"
// has been checked by the crew and is not listed.

#include <string>
#include <vector>

#include "storage/trial_store.h"

namespace furrow {

struct LeavingItem {
  enum class Kind { missing, flagged, outlier, conflict } kind = Kind::missing;
  size_t plot_index = 0;     // into trial.layout.plots
  size_t trait_index = 0;    // into trial.plan.traits
  int occasion = 1;
  std::string message;       // plain words
};

struct BeforeLeaving {
  std::vector<LeavingItem> items;   // conflicts, outliers, flagged, then missing; each in walking order
  int missing = 0, flagged = 0, outliers = 0, conflicts = 0;
};

inline constexpr const char* kConfirmedNote = "confirmed";

BeforeLeaving before_leaving(const StoredTrial& trial, const std::vector<LiveObservation>& live, double alpha);

}  // namespace furrow
