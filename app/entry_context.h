#pragma once
// What the entry checks need to know about a plot from the trial's current
// data: the other plots' values of the trait, this device's recent entries
// and, once there is enough data, the value expected from the plot's block
// and treatment. Shared by `furrow record` and the Record screen.

#include "core/entry_checks.h"
#include "storage/trial_store.h"

namespace furrow {

// `live` holds the live rows of the trait (any order).
EntryContext entry_context_for(const StoredTrial& trial, const std::vector<LiveObservation>& live, size_t plot_index,
                               size_t trait_index, int occasion);

}  // namespace furrow
