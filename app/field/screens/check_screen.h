#pragma once
// The Check screen: the interim analysis of the chosen trait with the
// trial's design - analysis-of-variance table, means with SE and letter
// groups, CV, LSD, Tukey HSD, minimum detectable difference, variance
// components - the outlier plots and missing cells as rows that open the
// plot, and two charts drawn with ImGui's draw lists: the values per
// treatment, and residuals against fitted values. A banner says the
// analysis is interim, for checking data and not for decisions.

#include <optional>
#include <string>
#include <vector>

#include "app/field/screens/record_screen.h"
#include "app/work/theme.h"
#include "core/analysis.h"
#include "storage/trial_store.h"

namespace furrow {

struct CheckScreenState {
  std::vector<TapTarget> targets;   // rebuilt every frame
};

struct CheckAction {
  enum class Kind { open_plot, next_trait, previous_trait } kind = Kind::open_plot;
  size_t plot_index = 0;            // open_plot: into trial.layout.plots
};

// `analysis` is null when the trait cannot be analysed yet; `problem` then
// says why in plain words.
std::optional<CheckAction> draw_check_screen(const StoredTrial& trial, const Analysis* analysis,
                                             const std::string& problem, const std::string& trait_title,
                                             const Theme& theme, float scale, float top_px, CheckScreenState* state);

}  // namespace furrow
