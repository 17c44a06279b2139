// The cells method (programme-scale designs) against the dense method on
// mid-sized generated designs (1,000-1,200 plots, 3 % of plots missing): the
// whole analysis - table, means and their SEs, every pair's difference and
// SE, LSD range, residuals, studentized residuals - agrees to 1e-9. The dense
// method is itself checked against statsmodels and the NIST StRD sets
// (statsmodels_crosscheck_test.cpp, nist_anova_test.cpp), as is the cells
// method's table.

#include <doctest/doctest.h>

#include <cmath>
#include <functional>
#include <string>

#include "core/analysis.h"
#include "core/random_stream.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

constexpr double kRelative = 1e-9;

// A value near 50 with plot-to-plot noise and effects from the levels.
double noisy(RandomStream& rng, double effect) {
  double z = 0;
  for (int k = 0; k < 12; ++k) z += static_cast<double>(rng.below(1000000)) / 1e6;
  return 50 + effect + 4 * (z - 6);
}

struct Generated {
  PlotTable table;
  DesignRoles roles;
};

PlotTable make_table(const std::vector<std::string>& names) {
  PlotTable t;
  for (const std::string& n : names) t.columns.push_back({n, {}});
  return t;
}

void add(PlotTable& t, const std::vector<std::string>& cells) {
  for (size_t k = 0; k < cells.size(); ++k) t.columns[k].cells.push_back(cells[k]);
}

std::string num(double v) {
  char b[32];
  std::snprintf(b, sizeof b, "%.3f", v);
  return b;
}

// sites x 3 blocks x entries; `missing` of every 100 plots without a value.
Generated several_sites(int sites, int entries, int missing, std::uint64_t seed) {
  RandomStream rng(seed);
  Generated g;
  g.table = make_table({"site", "block", "entry", "y"});
  for (int s = 0; s < sites; ++s)
    for (int b = 0; b < 3; ++b)
      for (int e = 0; e < entries; ++e) {
        const bool gone = static_cast<int>(rng.below(100)) < missing;
        add(g.table, {"S" + std::to_string(s), "B" + std::to_string(b), "E" + std::to_string(e),
                      gone ? "" : num(noisy(rng, s * 2.0 + b * 0.5 + (e % 7) * 0.8 + ((s * e) % 5) * 0.3))});
      }
  g.roles.kind = DesignKind::multi_site;
  g.roles.site = "site";
  g.roles.block = "block";
  g.roles.treatments = {"entry"};
  g.roles.sites_random = true;
  return g;
}

Generated factorial(int a, int b, int blocks, int missing, std::uint64_t seed) {
  RandomStream rng(seed);
  Generated g;
  g.table = make_table({"block", "rate", "variety", "y"});
  for (int k = 0; k < blocks; ++k)
    for (int i = 0; i < a; ++i)
      for (int j = 0; j < b; ++j) {
        const bool gone = static_cast<int>(rng.below(100)) < missing;
        add(g.table, {"K" + std::to_string(k), "R" + std::to_string(i), "V" + std::to_string(j),
                      gone ? "" : num(noisy(rng, k + i * 0.7 + (j % 9) * 0.4 + ((i + 2 * j) % 4) * 0.5))});
      }
  g.roles.kind = DesignKind::factorial;
  g.roles.block = "block";
  g.roles.treatments = {"rate", "variety"};
  return g;
}

Generated split_plot(int blocks, int mains, int subs, int missing, std::uint64_t seed) {
  RandomStream rng(seed);
  Generated g;
  g.table = make_table({"block", "tillage", "entry", "y"});
  for (int k = 0; k < blocks; ++k)
    for (int i = 0; i < mains; ++i) {
      const double whole = noisy(rng, 0) - 50;
      for (int j = 0; j < subs; ++j) {
        const bool gone = static_cast<int>(rng.below(100)) < missing;
        add(g.table, {"K" + std::to_string(k), "T" + std::to_string(i), "E" + std::to_string(j),
                      gone ? "" : num(noisy(rng, whole + i + (j % 6) * 0.6))});
      }
    }
  g.roles.kind = DesignKind::split_plot;
  g.roles.block = "block";
  g.roles.main_plot = "tillage";
  g.roles.sub_plot = "entry";
  return g;
}

void close(double got, double want, const char* what) {
  INFO(what << ": cells " << got << ", dense " << want);
  CHECK(test::close_rel(got, want, kRelative, 1e-9));
}

void compare(const Generated& g, SumsKind sums) {
  AnalysisOptions o;
  o.sums = sums;
  o.method = FitMethod::dense;
  const auto dense = analyse(g.table, g.roles, "y", o);
  o.method = FitMethod::cells;
  const auto cells = analyse(g.table, g.roles, "y", o);
  REQUIRE_MESSAGE(dense.ok(), (dense ? "" : dense.problem().message));
  REQUIRE_MESSAGE(cells.ok(), (cells ? "" : cells.problem().message));
  CHECK(cells->method == FitMethod::cells);
  REQUIRE(cells->table.size() == dense->table.size());
  for (size_t k = 0; k < dense->table.size(); ++k) {
    const AnovaRow& c = cells->table[k];
    const AnovaRow& d = dense->table[k];
    CAPTURE(d.source);
    CHECK(c.source == d.source);
    CHECK(c.df == d.df);
    close(c.ss, d.ss, "SS");
    REQUIRE(c.f.has_value() == d.f.has_value());
    if (d.f) close(*c.f, *d.f, "F");
    if (d.p) close(*c.p, *d.p, "P");
  }
  close(cells->cv_percent, dense->cv_percent, "CV");
  REQUIRE(cells->means.size() == dense->means.size());
  for (size_t t = 0; t < dense->means.size(); ++t) {
    const TermMeans& c = cells->means[t];
    const TermMeans& d = dense->means[t];
    CAPTURE(d.term);
    REQUIRE(c.levels.size() == d.levels.size());
    for (size_t i = 0; i < d.levels.size(); ++i) {
      CAPTURE(d.levels[i].label);
      CHECK(c.levels[i].estimable == d.levels[i].estimable);
      if (!d.levels[i].estimable) continue;
      close(c.levels[i].mean, d.levels[i].mean, "mean");
      close(c.levels[i].se, d.levels[i].se, "SE");
    }
    close(c.sed, d.sed, "SED");
    close(c.lsd_min, d.lsd_min, "smallest LSD");
    close(c.lsd_max, d.lsd_max, "largest LSD");
    REQUIRE(c.pairs.size() == d.pairs.size());
    for (size_t k = 0; k < d.pairs.size(); ++k) {
      close(c.pairs[k].difference, d.pairs[k].difference, "difference");
      close(c.pairs[k].se, d.pairs[k].se, "SE of a difference");
    }
  }
  REQUIRE(cells->fits.size() == dense->fits.size());
  for (size_t i = 0; i < dense->fits.size(); ++i) {
    close(cells->fits[i].residual, dense->fits[i].residual, "residual");
    close(cells->fits[i].studentized, dense->fits[i].studentized, "studentized residual");
  }
  CHECK(cells->outliers.size() == dense->outliers.size());
}

TEST_CASE("cells and dense agree to 1e-9: several sites, 6 x 3 blocks x 60 entries, 3 % missing") {
  const Generated g = several_sites(6, 60, 3, 11);
  compare(g, SumsKind::partial);
  compare(g, SumsKind::sequential);
}

TEST_CASE("cells and dense agree to 1e-9: factorial 20 x 20 in 3 blocks, 3 % missing") {
  const Generated g = factorial(20, 20, 3, 3, 12);
  compare(g, SumsKind::partial);
  compare(g, SumsKind::sequential);
}

TEST_CASE("cells and dense agree to 1e-9: split-plot, 4 blocks x 5 main plots x 50 sub-plots, 3 % missing") {
  compare(split_plot(4, 5, 50, 3, 13), SumsKind::partial);
}

// Every plot of the given levels removed (an entry not grown at a site, a
// main plot lost).
Generated without(Generated g, const std::string& column_a, const std::string& a, const std::string& column_b,
                  const std::string& b) {
  const DataColumn* ca = g.table.find(column_a);
  const DataColumn* cb = g.table.find(column_b);
  PlotTable kept = make_table({g.table.columns[0].name, g.table.columns[1].name, g.table.columns[2].name, "y"});
  for (int r = 0; r < g.table.records(); ++r)
    if (!(ca->cells[r] == a && cb->cells[r] == b))
      add(kept, {g.table.columns[0].cells[r], g.table.columns[1].cells[r], g.table.columns[2].cells[r],
                 g.table.columns[3].cells[r]});
  g.table = kept;
  return g;
}

const MeanRow& level(const TermMeans& tm, const std::string& label) {
  for (const MeanRow& r : tm.levels)
    if (r.label == label) return r;
  FAIL("no level " << label);
  return tm.levels.front();
}

TEST_CASE("an entry not grown at one site: analysed; its mean is not estimable with the interaction, and says why") {
  const Generated g = without(several_sites(4, 8, 0, 21), "site", "S1", "entry", "E3");
  const auto a = analyse(g.table, g.roles, "y");
  REQUIRE_MESSAGE(a.ok(), (a ? "" : a.problem().message));
  const TermMeans& entry = a->means[0];
  CHECK_FALSE(level(entry, "E3").estimable);
  CHECK(level(entry, "E2").estimable);
  CHECK(entry.note.find("1 of 8 means not estimable: E3 (no plot in site S1 x entry E3)") != std::string::npos);
  const TermMeans& cells = a->means[1];
  CHECK(cells.levels.size() == 4 * 8 - 1);   // the cell no plot is in is not listed; the note names it
  bool said = false;
  for (const std::string& n : a->notes) said = said || n.find("no plot has a value in 1 cell of 'site x entry'") == 0;
  CHECK(said);
  CHECK(test::row(*a, "site x entry").df == 3 * 7 - 1);   // (4 x 8 - 1 empty) cells less sites and entries
  compare(g, SumsKind::partial);
  // Without the interaction every entry's mean is estimated from the main effects.
  Generated main_effects = g;
  main_effects.roles.without_interaction = true;
  const auto b = analyse(main_effects.table, main_effects.roles, "y");
  REQUIRE(b.ok());
  REQUIRE(b->means.size() == 1);
  for (const MeanRow& r : b->means[0].levels) CHECK(r.estimable);
  CHECK(test::row(*b, "entry").error_term == "residual");
  bool noted = false;
  for (const std::string& n : b->notes) noted = noted || n.find("analysed without the treatment interaction") == 0;
  CHECK(noted);
  compare(main_effects, SumsKind::partial);
}

TEST_CASE("a split-plot with a whole main plot missing: analysed, means over the main plots measured") {
  const Generated g = without(split_plot(4, 3, 30, 0, 22), "block", "K1", "tillage", "T2");
  const auto a = analyse(g.table, g.roles, "y");
  REQUIRE_MESSAGE(a.ok(), (a ? "" : a.problem().message));
  bool said = false;
  for (const std::string& n : a->notes)
    said = said || n == "no plot has a value in 1 cell of 'block x tillage': block K1 x tillage T2. Means average over "
                        "the block x tillage cells that were measured (each main plot of the same weight)";
  CHECK(said);
  // Every mean is estimated; T2's (its three main plots whole) is the plain mean of its plots.
  for (const TermMeans& tm : a->means)
    for (const MeanRow& r : tm.levels) CHECK(r.estimable);
  const MeanRow& t2 = level(a->means[0], "T2");
  CHECK(t2.mean == doctest::Approx(t2.raw_mean).epsilon(1e-12));
  CHECK(t2.n == 3 * 30);
  CHECK(a->means[1].sed > 0);   // the sub-plot comparisons are all there
  compare(g, SumsKind::partial);
}

}  // namespace
}  // namespace furrow
