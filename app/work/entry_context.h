#pragma once
// What the entry checks need to know about a plot from the trial's current
// data: the other plots' values of the trait, this device's recent entries
// and, once there is enough data, the value expected from the plot's block
// and treatment. Shared by `furrow record` and the Record screen.

#include "core/entry_checks.h"
#include "storage/trial_store.h"

#include <optional>
#include <string>
#include <vector>

namespace furrow {

// The trait's data read once, for the contexts of many plots (the Before
// leaving list checks every plot of a trait).
class TraitEntryContext {
 public:
  // `live` holds the live rows (any order, any traits).
  TraitEntryContext(const StoredTrial& trial, const std::vector<LiveObservation>& live, size_t trait_index,
                    int occasion);
  EntryContext for_plot(size_t plot_index) const;
  // For screening a plot's saved value: the same statistics from the other
  // plots, in O(log n) through LeaveOneOut, other_values left empty.
  // Precondition: the plot holds exactly one live value of the trait.
  EntryContext for_saved_value(size_t plot_index) const;

 private:
  std::vector<std::string> recent_entries() const;
  const StoredTrial& trial_;
  size_t trait_index_;
  std::vector<std::string> previous_entries_;
  std::vector<size_t> plots_;
  std::vector<double> values_;
  std::vector<int> blocks_, treatments_;
  std::optional<LeaveOneOut> leave_one_out_;
  std::vector<size_t> index_of_plot_;   // plot index -> its value's index (SIZE_MAX: none)
};

// `live` holds the live rows of the trait (any order).
EntryContext entry_context_for(const StoredTrial& trial, const std::vector<LiveObservation>& live, size_t plot_index,
                               size_t trait_index, int occasion);

}  // namespace furrow
