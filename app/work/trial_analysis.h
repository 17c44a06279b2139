#pragma once
// The interim analysis of one trait of a trial database, with the trial's
// own design: the plots in walking order become the records (so a
// Problem's or an outlier's record is an index into trial.layout.plots).
// Cells in conflict are left out until they are settled.

#include "core/analysis.h"
#include "core/mixed_analysis.h"
#include "storage/trial_store.h"

namespace furrow {

// Precondition: trait_index is in range. Fails for text and category traits
// and with the engine's Problems (one level, no error DF, ...).
Result<Analysis> analyse_trial_trait(const StoredTrial& trial, const std::vector<LiveObservation>& live,
                                     size_t trait_index, int occasion, const AnalysisOptions& options);

// The same trait by REML (core/mixed_analysis.h), positions from the plan's
// field rows and columns; field trend only for a trial at one site.
Result<MixedAnalysis> reml_trial_trait(const StoredTrial& trial, const std::vector<LiveObservation>& live,
                                       size_t trait_index, int occasion, const AnalysisOptions& options,
                                       FieldTrendChoice trend);

}  // namespace furrow
