#pragma once
// The analysis of one trait by REML (core/reml.h), with the design chosen by
// name, as the analysis of variance is (core/analysis.h). Where the analysis
// of variance is exact (balanced data, or fixed effects only) both give the
// same answer; this one stays right where plots, main plots or whole entries
// at a site are missing, and can model field trend.
//
// The model each design implies (common practice for field trials; e.g.
// Gilmour, Cullis & Verbyla 1997; Smith, Cullis & Thompson 2005, J. Agric.
// Sci. 143, 449-462):
//   crd          treatments fixed (random when asked)
//   rcbd         treatments fixed (random when asked), blocks random
//   latin        treatment fixed (random when asked), rows and columns random
//   factorial    treatment terms fixed, blocks random
//   split-plot   main, sub and main x sub fixed; blocks and block x main random
//   multi-site   sites fixed (random when asked), entries fixed (random when
//                asked), blocks within sites random, entry x site random
// Heritability of random entries: Cullis, Smith & Coombes (2006), J. Agric.
// Biol. Env. Stat. 11, 381-393: H2 = 1 - (mean prediction error variance of
// a difference of two entries) / (2 sigma2_g); with balanced data it equals
// the classical entry-mean form (Falconer & Mackay 1996), which is also given.
// Field trend: AR1 x AR1 plus plot error (Gilmour, Cullis & Verbyla 1997),
// kept only when a REML likelihood-ratio test against independent errors
// rejects at the trend level (chi-square on 3 DF: conservative, the field
// variance being on its bound under no trend; Self & Liang 1987, JASA 82,
// 605-610).

#include <optional>
#include <string>
#include <vector>

#include "core/analysis.h"

namespace furrow {

enum class FieldTrendChoice { off, test, always };

struct MixedAnalysisOptions {
  double alpha = 0.05;
  bool comparisons = true;
  // Field trend needs the plots' positions: a row and a column column of
  // whole numbers (one site only).
  FieldTrendChoice trend = FieldTrendChoice::off;
  std::string row_column, col_column;
  double trend_alpha = 0.05;
  bool linear_row = false, linear_col = false;   // a straight-line trend down rows / across columns (fixed)
};

struct ComponentEstimate {
  std::string source;
  double variance = 0, se = 0;
  bool at_bound = false;     // held at zero (the estimate would be negative)
  bool correlation = false;  // an autocorrelation, not a variance
};

struct MixedTermTest {
  std::string source;
  bool estimable = true;
  double num_df = 0, den_df = 0, f = 0, p = 0;
};

struct EntryPrediction {
  std::string level;
  double blup = 0, predicted = 0, se = 0;   // se: root prediction error variance of the effect
  int n = 0;
};

struct FieldTrendFit {
  bool chosen = false;
  double loglik_independent = 0, loglik_trend = 0;
  double lr_statistic = 0, p = 1;
  double rho_row = 0, rho_row_se = 0, rho_col = 0, rho_col_se = 0;
  double variance = 0, variance_se = 0;
  int rows = 0, cols = 0, first_row = 0, first_col = 0;   // grid (positions first_row .. first_row + rows - 1)
  std::vector<double> trend;    // per grid cell, col * rows + row: the fitted field
  std::vector<double> record_trend;   // per input record (0 for records without a position)
};

struct MixedAnalysis {
  DesignKind design = DesignKind::randomised_complete_block;
  std::string response;
  int n = 0, n_missing = 0;
  double alpha = 0.05;
  double grand_mean = 0, loglik = 0;
  int iterations = 0;
  bool converged = false;
  std::string model;                          // the model in plain words
  std::vector<ComponentEstimate> components;  // random terms, then field, then residual
  std::vector<MixedTermTest> tests;           // fixed treatment (and site) terms
  std::vector<TermMeans> means;               // predicted means per fixed treatment term
  std::optional<double> heritability;         // Cullis, Smith & Coombes (2006)
  std::optional<double> heritability_classical;   // entry-mean form, balanced data only
  std::vector<EntryPrediction> predictions;   // random entries
  std::optional<double> mdd_percent;          // of the first fixed treatment term
  std::optional<FieldTrendFit> trend;
  struct Slope {
    std::string direction;   // "rows" or "columns"
    double slope = 0, se = 0;   // per row (column) step, in the trait's unit
  };
  std::vector<Slope> straight_trend;          // when asked (--straight-trend)
  std::vector<std::string> notes;
  // Why this answer differs from the analysis of variance (empty when the
  // analysis of variance is exact for these data).
  std::vector<std::string> differs_because;
};

// Fails with a Problem naming column and record, as analyse() does.
Result<MixedAnalysis> analyse_reml(const PlotTable& table, const DesignRoles& roles, const std::string& response,
                                   const MixedAnalysisOptions& options = {});

}  // namespace furrow
