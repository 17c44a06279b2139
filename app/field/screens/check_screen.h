#pragma once
// The Check screen: first what to act on (outlier plots and missing cells,
// each a tap from its plot), then the interim analysis of the chosen trait
// with the trial's design - analysis-of-variance table, means with SE and letter
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
#include "core/mixed_analysis.h"
#include "storage/trial_store.h"

namespace furrow {

struct CheckScreenState {
  bool means_in_plan_order = false;    // else highest mean first
  bool every_trait_outliers = false;   // the supervisor's list instead of one trait's analysis
  bool without_interaction = false;    // main effects only (factorial, split-plot, several sites)
  bool reml_requested = false;         // a large trial's mixed-model check, asked for
  std::vector<TapTarget> targets;      // rebuilt every frame
};

struct CheckAction {
  enum class Kind { open_plot, open_plot_trait, next_trait, previous_trait } kind = Kind::open_plot;
  size_t plot_index = 0;            // open_plot(_trait): into trial.layout.plots
  size_t trait_index = 0;           // open_plot_trait
  int occasion = 1;
};

// One line of the every-trait outlier list.
struct EveryTraitOutlier {
  size_t plot_index = 0, trait_index = 0;
  int occasion = 1;
  std::string text;
};

// The mixed-model (REML) check beside the analysis of variance: shown where
// it differs (missing plots, a lost main plot, entries absent at a site,
// field trend) and why; one line where the analysis of variance is exact.
struct RemlView {
  const MixedAnalysis* analysis = nullptr;   // null: not computed (see on_request) or failed (see problem)
  std::string problem;
  bool on_request = false;                   // a large trial: a button computes it
};

// `analysis` is null when the trait cannot be analysed yet; `problem` then
// says why in plain words. `unit` is the trait's unit (may be empty);
// `every_trait` the outlier plots of every trait (shown on request).
std::optional<CheckAction> draw_check_screen(const StoredTrial& trial, const Analysis* analysis,
                                             const std::string& problem, const std::string& trait_title,
                                             const std::string& unit, const std::vector<EveryTraitOutlier>& every_trait,
                                             const Theme& theme, float scale, float top_px, CheckScreenState* state,
                                             const RemlView& reml = {});

}  // namespace furrow
