// REML analysis by design name (core/mixed_analysis.h).
//
// Balanced data: REML variance components equal the analysis-of-variance
// (expected-mean-squares) estimates when none is negative, and the fixed-
// effect F tests with Satterthwaite DF equal the stratum F tests - a property
// of REML for balanced designs (Searle, Casella & McCulloch 1992, Variance
// Components, ch. 6), checked here against this project's analysis-of-
// variance engine, which is itself checked against published tables and NIST.
// Required: 1e-6 relative.

#include <doctest/doctest.h>

#include <cmath>
#include <map>
#include <random>

#include "core/analysis.h"
#include "core/mixed_analysis.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

const ComponentEstimate& component(const MixedAnalysis& a, const std::string& source) {
  for (const auto& c : a.components)
    if (c.source == source) return c;
  FAIL("no component " << source);
  return a.components.front();
}
const MixedTermTest& test_of(const MixedAnalysis& a, const std::string& source) {
  for (const auto& t : a.tests)
    if (t.source == source) return t;
  FAIL("no test " << source);
  return a.tests.front();
}

MixedAnalysis reml(const PlotTable& t, const DesignRoles& roles, const std::string& y, MixedAnalysisOptions o = {}) {
  auto r = analyse_reml(t, roles, y, o);
  if (!r) FAIL(r.problem().message);
  return *r;
}
Analysis anova(const PlotTable& t, const DesignRoles& roles, const std::string& y) {
  auto r = analyse(t, roles, y);
  if (!r) FAIL(r.problem().message);
  return *r;
}

void check_rel(double got, double want, double rel = 1e-6) {
  INFO(got << " vs " << want);
  CHECK(std::abs(got - want) <= rel * std::abs(want));
}

DesignRoles oats_roles() {
  DesignRoles r;
  r.kind = DesignKind::split_plot;
  r.block = "B";
  r.main_plot = "V";
  r.sub_plot = "N";
  return r;
}

TEST_CASE("balanced RCBD (Clewer & Scarisbrick 2001, Example 10.1): REML equals the analysis of variance") {
  const PlotTable t = test::clewer();
  const MixedAnalysis m = reml(t, test::rcbd_roles(), "yield");
  const Analysis a = anova(t, test::rcbd_roles(), "yield");
  const double ms_block = *test::row(a, "block").ms, ms_e = *test::row(a, "residual").ms;
  check_rel(component(m, "block").variance, (ms_block - ms_e) / 4);
  check_rel(component(m, "residual (plot error)").variance, ms_e);
  const MixedTermTest& g = test_of(m, "gen");
  check_rel(g.f, *test::row(a, "gen").f);
  check_rel(g.num_df, 3);
  check_rel(g.den_df, 6);
  check_rel(g.p, *test::row(a, "gen").p);
  REQUIRE(m.means.size() == 1);
  // Means are the plain averages; the SED and LSD are the analysis of variance's.
  for (size_t i = 0; i < 4; ++i) check_rel(m.means[0].levels[i].mean, a.means[0].levels[i].mean, 1e-9);
  check_rel(m.means[0].sed, a.means[0].sed);
  check_rel(m.means[0].lsd, a.means[0].lsd);
  check_rel(m.means[0].hsd, a.means[0].hsd);
  CHECK(m.differs_because.empty());
  // With random blocks a mean's SE includes the block variance: sqrt((s2_b + s2_e / r) ... ) / ... here
  // Var(mean) = (s2_b + s2_e) / 3 (each variety once in each of 3 blocks).
  check_rel(m.means[0].levels[0].se, std::sqrt((component(m, "block").variance + ms_e) / 3));
}

TEST_CASE("split-plot: Yates (1935) oats; REML as printed by Pinheiro & Bates (2000)") {
  const PlotTable t = test::load_csv(test::reference_path("field-experiments/oats.csv"));
  const MixedAnalysis m = reml(t, oats_roles(), "Y");
  const Analysis a = anova(t, oats_roles(), "Y");
  // Published analysis of variance (SOURCE.md): B 3175.055556, B x V 601.330556, residual 177.083333.
  const double ms_b = 3175.055556, ms_bv = 601.330556, ms_e = 177.083333;
  check_rel(component(m, "B").variance, (ms_b - ms_bv) / 12, 1e-6);
  check_rel(component(m, "B x V").variance, (ms_bv - ms_e) / 4, 1e-6);
  check_rel(component(m, "residual (plot error)").variance, ms_e, 1e-6);
  // Pinheiro, J. C. and Bates, D. M. (2000), Mixed-Effects Models in S and S-PLUS, Springer, section 1.6,
  // fit this model (block and variety-within-block random) to the same Oats data and print standard
  // deviations of about 14.6 (block), 10.3 (variety within block) and 13.3 (residual). These figures are
  // recalled from memory, so they are checked to three figures only; the exact check is the one above,
  // against the published analysis of variance.
  CHECK(std::abs(std::sqrt(component(m, "B").variance) - 14.6) < 0.05);
  CHECK(std::abs(std::sqrt(component(m, "B x V").variance) - 10.3) < 0.05);
  CHECK(std::abs(std::sqrt(component(m, "residual (plot error)").variance) - 13.3) < 0.05);
  // F tests equal the stratum F tests (SOURCE.md: V 1.485340 against B x V, N 37.685647, N x V 0.302824).
  const MixedTermTest& v = test_of(m, "V");
  check_rel(v.f, 1.485340, 1e-6);
  check_rel(v.den_df, 10);
  check_rel(test_of(m, "N").f, 37.685647, 1e-6);
  check_rel(test_of(m, "N").den_df, 45);
  check_rel(test_of(m, "V x N").f, 0.302824, 1e-5);
  check_rel(test_of(m, "V x N").den_df, 45);
  check_rel(v.p, *test::row(a, "V").p);
  // Means and SEDs: the analysis of variance's (main plots against Ea, sub-plots against Eb).
  REQUIRE(m.means.size() == 3);
  for (int k = 0; k < 2; ++k) {
    for (size_t i = 0; i < m.means[k].levels.size(); ++i) check_rel(m.means[k].levels[i].mean, a.means[k].levels[i].mean, 1e-9);
    check_rel(m.means[k].sed, a.means[k].sed);
    check_rel(m.means[k].lsd, a.means[k].lsd);
  }
  CHECK(m.differs_because.empty());
}

TEST_CASE("split-plot with a whole main plot lost: every mean is estimable by REML") {
  PlotTable t = test::load_csv(test::reference_path("field-experiments/oats.csv"));
  const DataColumn* b = t.find("B");
  const DataColumn* v = t.find("V");
  DataColumn* y = nullptr;
  for (auto& c : t.columns)
    if (c.name == "Y") y = &c;
  int lost = 0;
  for (int r = 0; r < t.records(); ++r)
    if (b->cells[r] == "III" && v->cells[r] == "Marvellous") { y->cells[r] = "NA"; ++lost; }
  REQUIRE(lost == 4);
  const MixedAnalysis m = reml(t, oats_roles(), "Y");
  int estimable = 0, total = 0;
  for (const auto& tm : m.means)
    for (const auto& r : tm.levels) { estimable += r.estimable; ++total; }
  CHECK(estimable == total);
  CHECK(total == 3 + 4 + 12);
  CHECK(test_of(m, "V").estimable);
  CHECK(test_of(m, "V").den_df > 0);
  CHECK(test_of(m, "V").den_df < 10);   // fewer main plots than the complete trial's 10 DF
  CHECK_FALSE(m.differs_because.empty());
  CHECK(m.converged);
}

// A balanced several-site trial, simulated with a fixed seed.
PlotTable sites_table(int sites, int blocks, int entries, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> z(0, 1);
  PlotTable t;
  t.columns = {{"site", {}}, {"block", {}}, {"entry", {}}, {"y", {}}};
  std::vector<double> se(sites), ge(static_cast<size_t>(sites) * entries), g(entries);
  for (auto& v : se) v = 5 * z(rng);
  for (auto& v : g) v = 2 * z(rng);
  for (auto& v : ge) v = 1.2 * z(rng);
  for (int s = 0; s < sites; ++s)
    for (int b = 0; b < blocks; ++b) {
      const double bl = 1.5 * z(rng);
      for (int e = 0; e < entries; ++e) {
        t.columns[0].cells.push_back("S" + std::to_string(s));
        t.columns[1].cells.push_back(std::to_string(b + 1));
        t.columns[2].cells.push_back("E" + std::to_string(e));
        char buf[32];
        std::snprintf(buf, sizeof buf, "%.3f", 50 + se[s] + bl + g[e] + ge[static_cast<size_t>(s) * entries + e] + z(rng));
        t.columns[3].cells.push_back(buf);
      }
    }
  return t;
}

DesignRoles sites_roles(bool sites_random, bool entries_random) {
  DesignRoles r;
  r.kind = DesignKind::multi_site;
  r.site = "site";
  r.block = "block";
  r.treatments = {"entry"};
  r.sites_random = sites_random;
  r.treatments_random = entries_random;
  return r;
}

TEST_CASE("balanced several sites: REML components and the entry F test equal the analysis of variance") {
  const PlotTable t = sites_table(4, 3, 8, 11);
  const Analysis a = anova(t, sites_roles(true, false), "y");
  const MixedAnalysis m = reml(t, sites_roles(true, false), "y");
  const double ms_e = *test::row(a, "residual").ms;
  const double ms_ge = *test::row(a, "site x entry").ms;
  const double ms_b = *test::row(a, "block within site").ms;
  const double ms_s = *test::row(a, "site").ms;
  check_rel(component(m, "residual (plot error)").variance, ms_e);
  check_rel(component(m, "site x entry").variance, (ms_ge - ms_e) / 3);
  check_rel(component(m, "block within site").variance, (ms_b - ms_e) / 8);
  // E(MS site) = s2_e + 8 s2_b + 3 s2_ge + 24 s2_s (balanced, entries fixed: s2_ge's coefficient
  // is r = 3 in the unrestricted model).
  check_rel(component(m, "site").variance, (ms_s - ms_b - ms_ge + ms_e) / 24);
  const MixedTermTest& e = test_of(m, "entry");
  check_rel(e.f, *test::row(a, "entry").f);
  check_rel(e.num_df, 7);
  check_rel(e.den_df, 21);
}

TEST_CASE("balanced several sites, random entries: components, and heritability by both formulas") {
  const PlotTable t = sites_table(4, 3, 10, 23);
  const Analysis a = anova(t, sites_roles(true, true), "y");
  const MixedAnalysis m = reml(t, sites_roles(true, true), "y");
  const auto& vc = a.variance_components;
  REQUIRE(vc.treatment.has_value());
  check_rel(component(m, "entry").variance, *vc.treatment);
  check_rel(component(m, "site x entry").variance, *vc.treatment_by_site);
  REQUIRE(m.heritability.has_value());
  REQUIRE(m.heritability_classical.has_value());
  // Cullis, Smith & Coombes (2006): their generalisation equals the entry-mean form for balanced data.
  check_rel(*m.heritability, *m.heritability_classical, 1e-9);
  check_rel(*m.heritability, *vc.heritability);
  CHECK(m.predictions.size() == 10);
  // Predictions shrink toward the mean: their spread is less than the plain entry means'.
  double spread_blup = 0, spread_raw = 0;
  std::map<std::string, double> raw;
  for (int r = 0; r < t.records(); ++r) raw[t.columns[2].cells[r]] += std::stod(t.columns[3].cells[r]) / 12;
  double mean_raw = 0;
  for (auto& [k, v] : raw) mean_raw += v / 10;
  for (const auto& p : m.predictions) {
    spread_blup += std::pow(p.blup, 2);
    spread_raw += std::pow(raw[p.level] - mean_raw, 2);
  }
  CHECK(spread_blup < spread_raw);
}

TEST_CASE("balanced RCBD with random entries: heritability equals s2_g / (s2_g + s2_e / r)") {
  const PlotTable t = test::clewer();
  DesignRoles roles = test::rcbd_roles();
  roles.treatments_random = true;
  const Analysis a = anova(t, roles, "yield");
  const MixedAnalysis m = reml(t, roles, "yield");
  check_rel(component(m, "gen").variance, *a.variance_components.treatment);
  REQUIRE(m.heritability);
  check_rel(*m.heritability, *a.variance_components.heritability);
  check_rel(*m.heritability, *m.heritability_classical, 1e-9);
}

TEST_CASE("Latin square (Cochran & Cox 1957): rows and columns random, the operator F as printed") {
  const PlotTable t = test::load_csv(test::reference_path("field-experiments/cochran-latin.csv"));
  DesignRoles roles;
  roles.kind = DesignKind::latin_square;
  roles.row = "row_order";
  roles.column = "col_area";
  roles.treatments = {"operator"};
  const MixedAnalysis m = reml(t, roles, "diff");
  // Published: row 5.719833, column 15.773833, residual 3.328167 (MS); operator F 9.350243 on (5, 20).
  check_rel(component(m, "row_order").variance, (5.719833 - 3.328167) / 6, 1e-6);
  check_rel(component(m, "col_area").variance, (15.773833 - 3.328167) / 6, 1e-6);
  check_rel(test_of(m, "operator").f, 9.350243, 1e-6);
  check_rel(test_of(m, "operator").den_df, 20);
  // LSD as published: 2.197094.
  check_rel(m.means[0].lsd, 2.197094, 1e-6);
}

TEST_CASE("several sites with an entry absent at one site are analysed; the ANOVA's reasons are given") {
  PlotTable t = sites_table(4, 3, 8, 5);
  for (int r = 0; r < t.records(); ++r)
    if (t.columns[0].cells[r] == "S2" && t.columns[2].cells[r] == "E7") t.columns[3].cells[r] = "";
  const MixedAnalysis m = reml(t, sites_roles(false, false), "y");
  REQUIRE(m.means.size() == 1);
  for (const auto& r : m.means[0].levels) CHECK(r.estimable);
  CHECK(m.means[0].levels.size() == 8);
  // The absent entry's mean is less precise than the others'.
  double se_absent = 0, se_other = 0;
  for (const auto& r : m.means[0].levels) (r.label == "E7" ? se_absent : se_other) = r.se;
  CHECK(se_absent > se_other);
  CHECK(m.differs_because.size() >= 2);
}

TEST_CASE("a straight-line trend down the rows is estimated within its SE") {
  // 12 rows x 6 columns, 3 blocks of 4 rows, 24 entries; y rises 0.8 per row. Deterministic
  // pseudo-noise from a fixed linear congruence (no library generator).
  PlotTable t;
  t.columns = {{"row", {}}, {"col", {}}, {"block", {}}, {"entry", {}}, {"y", {}}};
  unsigned state = 12345;
  for (int r = 0; r < 12; ++r)
    for (int c = 0; c < 6; ++c) {
      state = state * 1103515245u + 12345u;
      const double noise = ((state >> 8) % 2001) / 1000.0 - 1.0;
      const int e = (r % 4) * 6 + (c + r / 4 * 5) % 6;
      char buf[32];
      std::snprintf(buf, sizeof buf, "%.4f", 30 + (e % 5) * 0.7 + 0.8 * r + noise);
      t.columns[0].cells.push_back(std::to_string(r + 1));
      t.columns[1].cells.push_back(std::to_string(c + 1));
      t.columns[2].cells.push_back(std::to_string(r / 4 + 1));
      t.columns[3].cells.push_back("E" + std::to_string(e));
      t.columns[4].cells.push_back(buf);
    }
  DesignRoles roles;
  roles.kind = DesignKind::randomised_complete_block;
  roles.block = "block";
  roles.treatments = {"entry"};
  MixedAnalysisOptions o;
  o.row_column = "row";
  o.col_column = "col";
  o.linear_row = true;
  const MixedAnalysis m = reml(t, roles, "y", o);
  REQUIRE(m.straight_trend.size() == 1);
  CHECK(m.straight_trend[0].direction == "rows");
  CHECK(m.straight_trend[0].se > 0);
  CHECK(std::abs(m.straight_trend[0].slope - 0.8) < 3 * m.straight_trend[0].se);
  CHECK_FALSE(m.trend.has_value());
}

TEST_CASE("bad input: a missing position column and a non-number position are named") {
  PlotTable t = test::clewer();
  MixedAnalysisOptions o;
  o.trend = FieldTrendChoice::test;
  o.row_column = "row";
  o.col_column = "nope";
  auto r = analyse_reml(t, test::rcbd_roles(), "yield", o);
  REQUIRE_FALSE(r.ok());
  CHECK(r.problem().column == "nope");
  o.col_column = "col";
  for (auto& c : t.columns)
    if (c.name == "row") c.cells[5] = "2.5";
  r = analyse_reml(t, test::rcbd_roles(), "yield", o);
  REQUIRE_FALSE(r.ok());
  CHECK(r.problem().column == "row");
  CHECK(r.problem().record == 5);
}

TEST_CASE("bad input: a plot error the data cannot tell from random blocks is refused in words") {
  // Common practice (no source): the plot error needs plots beyond those that
  // blocks and treatments use up; the analysis of variance has 0 residual DF.
  auto table = [](std::vector<std::string> block, std::vector<std::string> gen, std::vector<std::string> y) {
    PlotTable t;
    t.columns = {{"block", std::move(block)}, {"gen", std::move(gen)}, {"yield", std::move(y)}};
    return t;
  };
  // Two blocks, two entries, one plot lost: three plots, three fixed and block parameters.
  auto r = analyse_reml(table({"1", "1", "2", "2"}, {"a", "b", "a", "b"}, {"4.1", "5.0", "4.6", "NA"}),
                        test::rcbd_roles(), "yield", {});
  REQUIRE_FALSE(r.ok());
  CHECK(r.problem().message.find("cannot tell 'block' and the plot error apart") != std::string::npos);
  // Four blocks of one plot each: a block is a plot.
  r = analyse_reml(table({"1", "2", "3", "4"}, {"a", "b", "a", "b"}, {"4.1", "5.0", "4.6", "5.9"}),
                   test::rcbd_roles(), "yield", {});
  REQUIRE_FALSE(r.ok());
  CHECK(r.problem().message.find("one plot per level") != std::string::npos);
  // The same two blocks with every plot: one residual DF, and the fit goes ahead.
  r = analyse_reml(table({"1", "1", "2", "2"}, {"a", "b", "a", "b"}, {"4.1", "5.0", "4.6", "5.2"}),
                   test::rcbd_roles(), "yield", {});
  CHECK(r.ok());
}

PlotTable split_table(const std::vector<std::string>& rep, const std::vector<std::string>& main,
                      const std::vector<std::string>& sub, const std::vector<std::string>& y) {
  PlotTable t;
  t.columns = {{"B", rep}, {"V", main}, {"N", sub}, {"y", y}};
  return t;
}

TEST_CASE("split-plot with a main plot lost from one of two blocks: block and block x main plot refused") {
  // Two blocks; main plot A1 lost in block 2. The error contrasts are the
  // three A0 sub-plot differences between blocks, and block and block x main
  // plot enter each of them alike, so only their sum is identifiable
  // (Searle, Casella & McCulloch 1992, ch. 6). An earlier version stopped
  // short of the maximum here and reported the split as estimated.
  const PlotTable t = split_table({"1", "1", "1", "1", "1", "1", "2", "2", "2", "2", "2", "2"},
                                  {"A0", "A0", "A0", "A1", "A1", "A1", "A0", "A0", "A0", "A1", "A1", "A1"},
                                  {"S0", "S1", "S2", "S0", "S1", "S2", "S0", "S1", "S2", "S0", "S1", "S2"},
                                  {"21.272", "21.926", "22.694", "20.880", "22.740", "24.050", "21.500", "21.720",
                                   "21.315", "", "", ""});
  const auto r = analyse_reml(t, oats_roles(), "y", {});
  REQUIRE_FALSE(r.ok());
  CHECK(r.problem().message.find("cannot tell 'B' and 'B x V' apart") != std::string::npos);
}

TEST_CASE("split-plot where block and block x main plot cannot be told apart is refused in words") {
  // Main plot A1 only in block 1 of 3: the likelihood is flat along a mix of
  // the two variances (found by a reviewer: any split gave the same fit).
  const PlotTable t = split_table(
      {"1", "1", "1", "1", "1", "1", "2", "2", "2", "2", "2", "2", "3", "3", "3", "3", "3", "3"},
      {"A0", "A0", "A0", "A1", "A1", "A1", "A0", "A0", "A0", "A1", "A1", "A1", "A0", "A0", "A0", "A1", "A1", "A1"},
      {"S0", "S1", "S2", "S0", "S1", "S2", "S0", "S1", "S2", "S0", "S1", "S2", "S0", "S1", "S2", "S0", "S1", "S2"},
      {"20.666", "21.932", "21.940", "21.018", "21.980", "22.546", "20.489", "20.962", "23.648", "", "", "", "22.531",
       "24.421", "23.726", "", "", ""});
  const auto r = analyse_reml(t, oats_roles(), "y", {});
  REQUIRE_FALSE(r.ok());
  CHECK(r.problem().message.find("cannot tell 'B' and 'B x V' apart") != std::string::npos);
}

TEST_CASE("field trend on a trial too small for its parameters: refused when asked always, a note when tested") {
  // 8 plots, 2 blocks x 4 entries: 4 error contrasts for 5 parameters.
  PlotTable t;
  t.columns = {{"block", {"1", "1", "1", "1", "2", "2", "2", "2"}},
               {"row", {"1", "1", "1", "1", "2", "2", "2", "2"}},
               {"col", {"1", "2", "3", "4", "1", "2", "3", "4"}},
               {"gen", {"E02", "E03", "E01", "E00", "E02", "E00", "E03", "E01"}},
               {"yield", {"9.593", "11.065", "10.758", "8.534", "11.515", "8.885", "11.463", "10.638"}}};
  MixedAnalysisOptions o;
  o.trend = FieldTrendChoice::always;
  o.row_column = "row";
  o.col_column = "col";
  auto r = analyse_reml(t, test::rcbd_roles(), "yield", o);
  REQUIRE_FALSE(r.ok());
  CHECK(r.problem().message.find("needs at least 10") != std::string::npos);
  o.trend = FieldTrendChoice::test;
  r = analyse_reml(t, test::rcbd_roles(), "yield", o);
  REQUIRE(r.ok());
  CHECK_FALSE(r->trend.has_value());
  REQUIRE(r->notes.size() >= 1);
  CHECK(r->notes.back().find("field trend not tested") == 0);
}

TEST_CASE("an entry of the plan with no value is named in a note, not dropped silently") {
  PlotTable t;
  t.columns = {{"block", {"1", "1", "1", "2", "2", "2", "3", "3", "3"}},
               {"gen", {"A", "B", "C", "A", "B", "C", "A", "B", "C"}},
               {"yield", {"4.1", "5.0", "", "4.6", "5.2", "NA", "4.0", "5.1", ""}}};
  const MixedAnalysis m = reml(t, test::rcbd_roles(), "yield");
  bool named = false;
  for (const auto& n : m.notes) named |= n == "'gen' level 'C' has no plot with a value and is left out";
  CHECK(named);
}

TEST_CASE("split-plot with one complete block and single sub-plots elsewhere: identifiable, so fitted") {
  // 8 plots; the three variances are told apart by the 4 error contrasts, if
  // weakly. A reviewer's independent numpy/scipy REML maximisation (dense
  // likelihood, several starts) gave block 7.63, block x main plot 0, plot
  // error 2.13, log-likelihood -9.18295; an earlier rank test refused it.
  const PlotTable t = split_table({"R1", "R1", "R1", "R1", "R2", "R2", "R2", "R2", "R3", "R3", "R3", "R3"},
                                  {"A0", "A0", "A1", "A1", "A0", "A0", "A1", "A1", "A0", "A0", "A1", "A1"},
                                  {"S0", "S1", "S0", "S1", "S0", "S1", "S0", "S1", "S0", "S1", "S0", "S1"},
                                  {"23.215", "22.582", "24.186", "23.938", "", "17.445", "17.894", "", "20.096", "",
                                   "", "24.775"});
  const MixedAnalysis m = reml(t, oats_roles(), "y");
  CHECK(std::abs(m.loglik - -9.18295) < 1e-4);
  CHECK(std::abs(component(m, "B").variance - 7.63) < 0.01);
  CHECK(component(m, "B x V").variance == 0.0);
  CHECK(std::abs(component(m, "residual (plot error)").variance - 2.13) < 0.01);
}

}  // namespace
}  // namespace furrow
