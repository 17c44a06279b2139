#include "app/cli/analysis_output.h"
#include "app/cli/output_safety.h"
#include <iostream>
#include "app/work/glossary.h"

#include <cmath>
#include <cstdio>
#include <nlohmann/json.hpp>
#include <sstream>

#include "app/work/number_text.h"

namespace furrow {
namespace {


std::string num(double v, int digits = 6) { return table_number(v, digits); }

std::string pad(const std::string& s, size_t width, bool right = true) {
  if (s.size() >= width) return s;
  return right ? std::string(width - s.size(), ' ') + s : s + std::string(width - s.size(), ' ');
}

nlohmann::json opt(const std::optional<double>& v) { return v ? nlohmann::json(*v) : nlohmann::json(nullptr); }
// An autocorrelation's SE, none when it is held at its limit of +-0.995.
std::optional<double> rho_se(double se) { return se > 0 ? std::optional<double>(se) : std::nullopt; }
std::string rho_se_text(double se) { return se > 0 ? "SE " + table_number(se, 2) : std::string("at its limit"); }

void means_text(std::ostringstream& o, const TermMeans& m, double alpha, int md) {
  o << "\nMeans of " << m.term << (m.adjusted ? " (adjusted for the other terms)" : "") << ", SE from '"
    << m.error_term << "'\n";
  size_t lw = 7;
  for (const MeanRow& r : m.levels) lw = std::max(lw, r.label.size() + 2);
  const bool letters = !m.pairs.empty();
  o << pad(m.term, lw, false) << pad(term::kPlots, 7) << pad(term::kMean, 14) << pad(term::kSe, 12);
  if (m.adjusted) o << pad("Plain mean", 14);
  if (letters) o << "   " << term::kLsdGroup << "  " << term::kHsdGroup;
  o << "\n";
  for (const MeanRow& r : m.levels) {
    o << pad(r.label, lw, false) << pad(std::to_string(r.n), 7)
      << pad(r.estimable ? num(r.mean, md) : term::kNotEstimable, std::max<size_t>(14, md + 3)) << pad(r.estimable ? num(r.se, 4) : "", 12);
    if (m.adjusted) o << pad(num(r.raw_mean, md), std::max<size_t>(14, md + 3));
    if (letters) o << "   " << pad(r.group_lsd, 9, false) << "  " << r.group_hsd;
    o << "\n";
  }
  if (m.sed > 0) {
    o << "SE of a difference " << num(m.sed, 4) << "   " << term::lsd_title(alpha) << " " << num(m.lsd, 4);
    if (m.lsd_max > m.lsd_min * (1 + 1e-9)) o << " (pairs " << num(m.lsd_min, 4) << " to " << num(m.lsd_max, 4) << ")";
    if (m.q_critical > 0) o << "   " << term::hsd_title(alpha) << " " << num(m.hsd, 4);
    o << "\n";
  }
  if (!m.note.empty()) o << m.note << "\n";
}

void means_json(nlohmann::json& j, const TermMeans& m) {
  for (const MeanRow& r : m.levels) {
    j["means"].push_back({{"term", m.term},
                          {"level", r.label},
                          {"levels", r.levels},
                          {"n", r.n},
                          {"estimable", r.estimable},
                          {"mean", r.estimable ? nlohmann::json(r.mean) : nlohmann::json(nullptr)},
                          {"se", r.estimable ? nlohmann::json(r.se) : nlohmann::json(nullptr)},
                          {"plain_mean", r.raw_mean},
                          {"group_lsd", r.group_lsd},
                          {"group_hsd", r.group_hsd}});
  }
  nlohmann::json c = {{"term", m.term},
                      {"error_term", m.error_term},
                      {"error_ms", m.error_ms},
                      {"error_df", m.error_df},
                      {"sed", m.sed},
                      {"lsd", m.lsd},
                      {"lsd_min", m.lsd_min},
                      {"lsd_max", m.lsd_max},
                      {"t_critical", m.t_critical},
                      {"hsd", m.q_critical > 0 ? nlohmann::json(m.hsd) : nlohmann::json(nullptr)},
                      {"q_critical", m.q_critical > 0 ? nlohmann::json(m.q_critical) : nlohmann::json(nullptr)},
                      {"note", m.note}};
  c["pairs"] = nlohmann::json::array();
  for (const PairComparison& p : m.pairs)
    c["pairs"].push_back({{"first", m.levels[p.first].label},
                          {"second", m.levels[p.second].label},
                          {"difference", p.difference},
                          {"se", p.se},
                          {"lsd", p.lsd},
                          {"hsd", p.hsd}});
  if (!m.note.empty()) c["note"] = m.note;
  j["comparisons"].push_back(c);
}

// One object (or an array), with a note on stderr when bytes had to be replaced.
std::string json_output(const nlohmann::json& j) {
  bool replaced = false;
  std::string text = json_text(j, &replaced) + "\n";
  if (replaced)
    std::cerr << "note: some level names or values held bytes that are not valid UTF-8; they are shown as U+FFFD\n";
  return text;
}

}  // namespace

std::string analysis_text(const Analysis& a, const RecordNames& records) {
  std::ostringstream o;
  const int md = digits_for(a.grand_mean, a.residual_sd, 6);   // means to a tenth of the plot-to-plot SD
  o << "== " << a.response << "  |  " << design_kind_title(a.design) << "  |  " << a.n << " plots analysed";
  if (a.n_missing) o << ", " << a.n_missing << " without a value";
  o << "\n" << kInterimCaution << "\n\n";
  o << "Analysis of variance (" << sums_kind_key(a.sums) << " sums of squares)\n";
  size_t w = 8;
  for (const AnovaRow& r : a.table) w = std::max(w, r.source.size() + 2);
  o << pad("Source", w, false) << pad("DF", 6) << pad("SS", 16) << pad("MS", 16) << pad("F", 11) << pad("P", 9)
    << "   " << term::kTestedAgainst << "\n";
  for (const AnovaRow& r : a.table) {
    o << pad(r.source, w, false) << pad(df_text(r.df), 6) << pad(num(r.ss, 10), 16)
      << pad(r.ms ? num(*r.ms, 10) : "", 16) << pad(r.f ? num(*r.f, 5) : "", 11) << pad(r.p ? p_text(*r.p) : "", 9)
      << "   " << r.error_term << "\n";
  }
  o << "\nGrand mean " << num(a.grand_mean, md) << "   CV " << num(a.cv_percent, 3) << " %   R squared "
    << num(a.r_squared, 4) << "   residual SD " << num(a.residual_sd) << " on " << df_text(a.residual_df) << " DF\n";
  for (const TermMeans& m : a.means) means_text(o, m, a.alpha, md);
  if (a.mdd_percent)
    o << "\nSmallest difference detectable with 80 % power at alpha " << a.alpha << ": " << num(*a.mdd_percent, 3)
      << " % of the mean\n";
  const VarianceComponents& vc = a.variance_components;
  o << "\nVariance components\n";
  if (vc.error) o << "  error (plot to plot)        " << num(*vc.error) << "\n";
  if (vc.main_plot_error) o << "  main-plot error             " << num(*vc.main_plot_error) << "\n";
  if (vc.treatment) o << "  treatment                   " << num(*vc.treatment) << "\n";
  if (vc.treatment_by_site) o << "  treatment x site            " << num(*vc.treatment_by_site) << "\n";
  if (vc.heritability)
    o << "  heritability (entry means)  " << num(*vc.heritability, 3) << "  (r = " << num(vc.replicates, 4)
      << (vc.sites > 1 ? ", s = " + num(vc.sites, 3) : "") << ")\n";
  o << "  share of total SS:";
  for (const VarianceShare& s : vc.shares) o << "  " << s.source << " " << num(100 * s.share, 3) << " %";
  o << "\n";
  for (const std::string& n : vc.notes) o << "  note: " << n << "\n";
  o << "\nOutlier plots (" << a.outlier_rule << "): ";
  if (a.outliers.empty()) o << "none\n";
  else {
    o << count_of(static_cast<long>(a.outliers.size()), term::kOutlierPlot) << "\n";
    for (const OutlierPlot& p : a.outliers) {
      o << "  " << records.word << " " << records.name(p.record) << ": value " << value_text(p.value) << ", the other plots predict "
        << value_text(p.expected) << ", studentized residual " << num(p.studentized_external, 3);
      if (p.p_holm) o << ", adjusted P " << p_text(*p.p_holm);
      o << "\n";
    }
  }
  o << "Missing cells: ";
  if (a.missing_cells.empty()) o << "none\n";
  else {
    o << a.missing_cells.size() << "\n";
    for (const MissingCell& c : a.missing_cells) {
      o << "  " << c.label;
      for (int r : c.records) o << " (" << records.word << " " << records.name(r) << ")";
      o << "\n";
    }
  }
  for (const std::string& n : a.notes) o << "Note: " << n << "\n";
  return o.str();
}

std::string analysis_json(const std::vector<Analysis>& analyses, const RecordNames& records) {
  nlohmann::json all = nlohmann::json::array();
  for (const Analysis& a : analyses) {
    nlohmann::json j;
    j["design"] = design_kind_key(a.design);
    j["response"] = a.response;
    j["n"] = a.n;
    j["n_missing"] = a.n_missing;
    j["sums"] = sums_kind_key(a.sums);
    j["method"] = fit_method_name(a.method);
    j["caution"] = kInterimCaution;
    j["table"] = nlohmann::json::array();
    for (const AnovaRow& r : a.table) {
      j["table"].push_back({{"source", r.source},
                            {"df", r.df},
                            {"ss", r.ss},
                            {"ms", opt(r.ms)},
                            {"f", opt(r.f)},
                            {"p", opt(r.p)},
                            {"error_term", r.error_term.empty() ? nlohmann::json(nullptr) : nlohmann::json(r.error_term)},
                            {"share_of_total", r.share_of_total}});
    }
    j["grand_mean"] = a.grand_mean;
    j["cv_percent"] = a.cv_percent;
    j["r_squared"] = a.r_squared;
    j["residual_sd"] = a.residual_sd;
    j["residual_df"] = a.residual_df;
    j["alpha"] = a.alpha;
    j["means"] = nlohmann::json::array();
    j["comparisons"] = nlohmann::json::array();
    for (const TermMeans& m : a.means) means_json(j, m);
    j["lsd"] = opt(a.lsd);
    j["hsd"] = opt(a.hsd);
    j["mdd_percent"] = opt(a.mdd_percent);
    const VarianceComponents& vc = a.variance_components;
    nlohmann::json v = {{"treatments_random", vc.treatments_random},
                        {"error", opt(vc.error)},
                        {"treatment", opt(vc.treatment)},
                        {"treatment_by_site", opt(vc.treatment_by_site)},
                        {"main_plot_error", opt(vc.main_plot_error)},
                        {"heritability", opt(vc.heritability)},
                        {"replicates", vc.replicates},
                        {"sites", vc.sites},
                        {"notes", vc.notes}};
    v["shares"] = nlohmann::json::array();
    for (const VarianceShare& s : vc.shares) v["shares"].push_back({{"source", s.source}, {"share", s.share}});
    j["variance_components"] = v;
    j["outlier_rule"] = a.outlier_rule;
    j["outliers"] = nlohmann::json::array();
    for (const OutlierPlot& p : a.outliers)
      j["outliers"].push_back({{records.word, records.word == "line" ? nlohmann::json(std::stoi(records.name(p.record)))
                                                                     : nlohmann::json(records.name(p.record))},
                               {"record", p.record + 1},
                               {"value", p.value},
                               {"fitted", p.fitted},
                               {"expected", p.expected},
                               {"studentized", p.studentized_external},
                               {"studentized_internal", p.studentized},
                               {"p_holm", opt(p.p_holm)}});
    j["missing_cells"] = nlohmann::json::array();
    for (const MissingCell& c : a.missing_cells) {
      nlohmann::json ls = nlohmann::json::array();
      for (int r : c.records)
        ls.push_back(records.word == "line" ? nlohmann::json(std::stoi(records.name(r))) : nlohmann::json(records.name(r)));
      j["missing_cells"].push_back({{"cell", c.label}, {records.word + "s", ls}});
    }
    j["notes"] = a.notes;
    all.push_back(j);
  }
  return json_output(analyses.size() == 1 ? all[0] : all);
}

std::string reml_text(const MixedAnalysis& a) {
  std::ostringstream o;
  double resid_sd = 0;
  if (!a.components.empty()) resid_sd = std::sqrt(std::max(0.0, a.components.back().variance));
  const int md = digits_for(a.grand_mean, resid_sd, 6);
  o << "== " << a.response << "  |  " << design_kind_title(a.design) << "  |  REML  |  " << a.n << " plots analysed";
  if (a.n_missing) o << ", " << a.n_missing << " without a value";
  o << "\n" << kInterimCaution << "\n";
  o << "Model: " << a.model << "\n";
  if (a.differs_because.empty())
    o << "The analysis of variance is exact for these data; this REML answer is the same.\n";
  for (const std::string& why : a.differs_because) o << "Differs from the analysis of variance: " << why << "\n";
  o << "\nVariance components (REML)\n";
  size_t w = 24;
  for (const ComponentEstimate& c : a.components) w = std::max(w, c.source.size() + 2);
  o << pad("Source", w, false) << pad("Estimate", 14) << pad("SE", 12) << "\n";
  for (const ComponentEstimate& c : a.components)
    o << pad(c.source, w, false) << pad(num(c.variance, 6), 14) << pad(c.at_bound ? "at bound" : num(c.se, 4), 12)
      << (c.correlation ? "   (autocorrelation)" : "") << "\n";
  if (a.heritability) {
    o << "Heritability (Cullis, Smith & Coombes 2006) " << num(*a.heritability, 3);
    if (a.heritability_classical) o << "; entry-mean form " << num(*a.heritability_classical, 3);
    o << "\n";
  }
  o << "\nFixed-effect tests (Wald F, Satterthwaite denominator DF)\n";
  size_t tw = 8;
  for (const MixedTermTest& t : a.tests) tw = std::max(tw, t.source.size() + 2);
  o << pad("Source", tw, false) << pad("DF", 6) << pad("Den. DF", 10) << pad("F", 11) << pad("P", 9) << "\n";
  for (const MixedTermTest& t : a.tests) {
    if (!t.estimable) { o << pad(t.source, tw, false) << "  not estimable (a combination never measured)\n"; continue; }
    o << pad(t.source, tw, false) << pad(df_text(t.num_df), 6) << pad(num(t.den_df, 4), 10) << pad(num(t.f, 5), 11)
      << pad(p_text(t.p), 9) << "\n";
  }
  o << "\nGrand mean " << num(a.grand_mean, md) << "   REML log-likelihood " << num(a.loglik, 10) << " ("
    << a.iterations << " iterations)\n";
  for (const TermMeans& m : a.means) means_text(o, m, a.alpha, md);
  if (a.mdd_percent)
    o << "\nSmallest difference detectable with 80 % power at alpha " << a.alpha << ": " << num(*a.mdd_percent, 3)
      << " % of the mean\n";
  if (!a.predictions.empty()) {
    o << "\nPredicted entries (BLUP, best first)\n";
    size_t lw = 7;
    for (const EntryPrediction& p : a.predictions) lw = std::max(lw, p.level.size() + 2);
    o << pad("Entry", lw, false) << pad(term::kPlots, 7) << pad("Predicted", 14) << pad("Effect", 12) << pad("SE", 10) << "\n";
    for (const EntryPrediction& p : a.predictions)
      o << pad(p.level, lw, false) << pad(std::to_string(p.n), 7) << pad(num(p.predicted, md), 14)
        << pad(num(p.blup, 4), 12) << pad(num(p.se, 3), 10) << "\n";
  }
  if (a.trend) {
    const FieldTrendFit& t = *a.trend;
    o << "\nField trend (rows and columns correlated, AR1 x AR1, plus plot error): " << (t.chosen ? "kept" : "not kept")
      << "\n  likelihood ratio " << num(t.lr_statistic, 4) << " on 3 DF, P " << p_text(t.p)
      << "   (REML log-likelihood " << num(t.loglik_trend, 10) << " against " << num(t.loglik_independent, 10)
      << " with independent plots)\n  autocorrelation down rows " << num(t.rho_row, 3) << " (" << rho_se_text(t.rho_row_se)
      << "), across columns " << num(t.rho_col, 3) << " (" << rho_se_text(t.rho_col_se) << "), field variance "
      << num(t.variance, 4) << "\n";
  }
  for (const auto& sl : a.straight_trend)
    o << "Straight-line trend across the " << sl.direction << ": " << num(sl.slope, 4) << " per " 
      << (sl.direction == "rows" ? "row" : "column") << " (SE " << num(sl.se, 3) << ")\n";
  for (const std::string& n : a.notes) o << "Note: " << n << "\n";
  return o.str();
}

std::string reml_json(const std::vector<MixedAnalysis>& analyses) {
  nlohmann::json all = nlohmann::json::array();
  for (const MixedAnalysis& a : analyses) {
    nlohmann::json j;
    j["analysis"] = "reml";
    j["design"] = design_kind_key(a.design);
    j["response"] = a.response;
    j["n"] = a.n;
    j["n_missing"] = a.n_missing;
    j["caution"] = kInterimCaution;
    j["model"] = a.model;
    j["differs_because"] = a.differs_because;
    j["grand_mean"] = a.grand_mean;
    j["log_likelihood"] = a.loglik;
    j["iterations"] = a.iterations;
    j["converged"] = a.converged;
    j["alpha"] = a.alpha;
    j["components"] = nlohmann::json::array();
    for (const ComponentEstimate& c : a.components)
      j["components"].push_back({{"source", c.source},
                                 {"estimate", c.variance},
                                 {"se", c.at_bound ? nlohmann::json(nullptr) : nlohmann::json(c.se)},
                                 {"at_bound", c.at_bound},
                                 {"kind", c.correlation ? "autocorrelation" : "variance"}});
    j["tests"] = nlohmann::json::array();
    for (const MixedTermTest& t : a.tests)
      j["tests"].push_back({{"source", t.source},
                            {"estimable", t.estimable},
                            {"df", t.estimable ? nlohmann::json(t.num_df) : nlohmann::json(nullptr)},
                            {"den_df", t.estimable ? nlohmann::json(t.den_df) : nlohmann::json(nullptr)},
                            {"f", t.estimable ? nlohmann::json(t.f) : nlohmann::json(nullptr)},
                            {"p", t.estimable ? nlohmann::json(t.p) : nlohmann::json(nullptr)}});
    j["means"] = nlohmann::json::array();
    j["comparisons"] = nlohmann::json::array();
    for (const TermMeans& m : a.means) means_json(j, m);
    j["mdd_percent"] = opt(a.mdd_percent);
    j["heritability"] = opt(a.heritability);
    j["heritability_entry_mean"] = opt(a.heritability_classical);
    j["predictions"] = nlohmann::json::array();
    for (const EntryPrediction& p : a.predictions)
      j["predictions"].push_back({{"level", p.level}, {"n", p.n}, {"predicted", p.predicted}, {"blup", p.blup}, {"se", p.se}});
    if (a.trend) {
      const FieldTrendFit& t = *a.trend;
      nlohmann::json f = {{"kept", t.chosen},
                          {"lr_statistic", t.lr_statistic},
                          {"p", t.p},
                          {"log_likelihood_trend", t.loglik_trend},
                          {"log_likelihood_independent", t.loglik_independent},
                          {"rho_row", t.rho_row},
                          {"rho_row_se", opt(rho_se(t.rho_row_se))},
                          {"rho_column", t.rho_col},
                          {"rho_column_se", opt(rho_se(t.rho_col_se))},
                          {"variance", t.variance},
                          {"rows", t.rows},
                          {"columns", t.cols},
                          {"first_row", t.first_row},
                          {"first_column", t.first_col},
                          {"trend", t.trend}};
      j["field_trend"] = f;
    } else {
      j["field_trend"] = nullptr;
    }
    j["straight_trend"] = nlohmann::json::array();
    for (const auto& sl : a.straight_trend)
      j["straight_trend"].push_back({{"direction", sl.direction}, {"slope", sl.slope}, {"se", sl.se}});
    j["notes"] = a.notes;
    all.push_back(j);
  }
  return json_output(analyses.size() == 1 ? all[0] : all);
}

}  // namespace furrow
