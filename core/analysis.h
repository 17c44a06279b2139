#pragma once
// The interim analysis of one trait: analysis-of-variance table with the
// right error term per source, means (plain and adjusted) with standard
// errors, LSD and Tukey HSD with letter groups, minimum detectable
// difference, variance components, outlier plots and missing cells.
//
// Input is a table of text cells (as read from a file or the database);
// response text is read as exact decimals (see exact_decimal.h). Every
// expected failure comes back as a Problem naming the column and record.

#include <optional>
#include <string>
#include <vector>

#include "core/design.h"
#include "core/linear_model.h"
#include "core/result.h"

namespace furrow {

// A plot whose externally studentized residual exceeds this in absolute
// value is listed as an outlier. Common practice in field-trial data checks
// (no single published source); the Bonferroni-Holm rule is the option with
// a published basis (Bernal-Vasquez, Utz & Piepho 2016, TAG 129, 787-804).
inline constexpr double kOutlierStudentizedThreshold = 3.0;
// Power used for the minimum detectable difference (common practice: 80 %).
inline constexpr double kDetectionPower = 0.80;
// Above this many levels pairwise comparisons and letters are not listed
// (the LSD and HSD for an average pair still are): 150 levels already give
// 11,175 pairs, more than anyone reads in the field.
inline constexpr int kMaxLevelsForPairs = 150;
// Interaction cells (site x entry, rate x variety) are compared pairwise only
// up to this many cells; beyond it the means and their SEs are still listed.
inline constexpr int kMaxCellsForInteractionPairs = 40;

enum class SumsKind { sequential, partial };
const char* sums_kind_key(SumsKind kind);        // "sequential" / "partial"

enum class OutlierRule { threshold, bonferroni_holm };

struct AnalysisOptions {
  double alpha = 0.05;
  SumsKind sums = SumsKind::partial;
  OutlierRule outlier_rule = OutlierRule::threshold;
  double outlier_threshold = kOutlierStudentizedThreshold;
  FitMethod method = FitMethod::automatic;
  bool comparisons = true;   // pairwise comparisons, HSD and letters
  bool without_interaction = false;   // as DesignRoles::without_interaction (for callers that build no roles)
};

// Text cells by column; every column has the same number of records.
struct DataColumn {
  std::string name;
  std::vector<std::string> cells;
};
struct PlotTable {
  std::vector<DataColumn> columns;
  const DataColumn* find(const std::string& name) const;
  int records() const { return columns.empty() ? 0 : static_cast<int>(columns.front().cells.size()); }
};

// A response cell that is empty, "NA" or "." is a missing plot.
bool is_missing_text(const std::string& cell);

struct AnovaRow {
  std::string source;          // column name, names joined by " x ", "residual", "total"
  TermRole role = TermRole::treatment;
  double df = 0, ss = 0;
  std::optional<double> ms, f, p;
  std::string error_term;      // label of the denominator ("residual" or a term); empty if untested
  double share_of_total = 0;   // SS / total SS
};

struct MeanRow {
  std::vector<std::string> levels;   // one per factor of the term
  std::string label;                 // levels joined by " x "
  int n = 0;
  double raw_mean = 0;               // plain average of the plots
  bool estimable = true;
  double mean = 0;                   // least-squares (adjusted) mean
  double se = 0;
  std::string group_lsd, group_hsd;  // letter groups, empty when not computed
};

struct PairComparison {
  int first = 0, second = 0;         // indices into TermMeans::levels
  double difference = 0, se = 0, lsd = 0, hsd = 0;
};

struct TermMeans {
  std::string term;
  std::vector<std::string> factors;
  std::string error_term;
  double error_ms = 0, error_df = 0;
  std::vector<MeanRow> levels;
  bool adjusted = false;             // least-squares means differ from plain averages
  // For an average pair of levels (root mean variance of a difference).
  double sed = 0, lsd = 0, hsd = 0;
  double lsd_min = 0, lsd_max = 0;   // over all pairs (equal when balanced)
  double t_critical = 0, q_critical = 0;
  std::vector<PairComparison> pairs; // empty when not computed
  std::string note;
};

struct VarianceShare {
  std::string source;
  double share = 0;                  // SS / total SS
};

struct VarianceComponents {
  bool treatments_random = false;
  std::optional<double> error;                 // sigma^2 e
  std::optional<double> treatment;             // sigma^2 g (treatments random)
  std::optional<double> treatment_by_site;     // sigma^2 ge (several sites)
  std::optional<double> main_plot_error;       // split-plot: (Ea - Eb) / b
  std::optional<double> heritability;          // entry-mean basis
  double replicates = 0, sites = 0;            // r (effective) and s used
  std::vector<VarianceShare> shares;
  std::vector<std::string> notes;
};

struct OutlierPlot {
  int record = -1;                  // index into the input table
  double value = 0, fitted = 0, residual = 0;
  double expected = 0;              // predicted from the other plots: value - residual / (1 - leverage)
  double studentized = 0;           // internally studentized
  double studentized_external = 0;  // externally studentized: the flagged statistic
  std::optional<double> p_holm;     // Bonferroni-Holm adjusted P (Holm rule only)
};

// Every analysed plot's fit (for residual maps and residual-against-fitted charts).
struct PlotFit {
  int record = -1;                  // index into the input table
  double value = 0, fitted = 0, residual = 0;
  double studentized = 0;           // internally studentized (0 when the plot alone fills its cell)
};
struct MissingCell {
  std::string label;                // e.g. "block 2 x entry Kestrel"
  std::vector<int> records;         // input records of the cell whose value is missing
};

struct Analysis {
  DesignKind design = DesignKind::randomised_complete_block;
  std::string response;
  int n = 0;                         // plots analysed
  int n_missing = 0;                 // records with a missing value
  SumsKind sums = SumsKind::partial;
  FitMethod method = FitMethod::automatic;
  std::vector<AnovaRow> table;       // model terms, then residual, then total
  double grand_mean = 0, cv_percent = 0, r_squared = 0, residual_sd = 0, residual_df = 0;
  double alpha = 0.05;
  std::vector<TermMeans> means;      // one per treatment term
  std::optional<double> lsd, hsd;    // of the first treatment term
  std::optional<double> mdd_percent; // minimum detectable difference, % of the mean: the exact noncentral-t
                                    // root at kDetectionPower (core/distributions.h)
  VarianceComponents variance_components;
  std::vector<OutlierPlot> outliers;
  std::vector<PlotFit> fits;         // every analysed plot, in input order
  std::string outlier_rule;          // plain words
  std::vector<MissingCell> missing_cells;
  std::vector<std::string> notes;
  std::string offset_text;           // exact centring offset used
};

// Analyses one response column. Fails with a Problem naming column and record
// for a missing column, a non-numeric value, a factor with one level, empty
// treatment cells, or a design with no error degrees of freedom.
Result<Analysis> analyse(const PlotTable& table, const DesignRoles& roles, const std::string& response,
                         const AnalysisOptions& options = {});

// Analyses several responses of one trial, factorising the design once per
// pattern of missing plots. One result per response, in order.
std::vector<Result<Analysis>> analyse_all(const PlotTable& table, const DesignRoles& roles,
                                          const std::vector<std::string>& responses,
                                          const AnalysisOptions& options = {});

// The caution shown with every interim analysis.
inline constexpr const char* kInterimCaution =
    "Interim analysis for checking data while the crew can still re-measure plots; "
    "it is not a basis for decisions about treatments.";

}  // namespace furrow
