// Classic field experiments with published analysis-of-variance tables
// (tests/reference/data/field-experiments, SOURCE.md there). The printed tables
// carry 2-6 decimals; each check allows half a unit in the last printed digit.

#include <doctest/doctest.h>

#include <map>

#include "core/analysis.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

Analysis run(const std::string& file, const DesignRoles& roles, const std::string& response, FitMethod method) {
  const PlotTable table = test::load_csv(test::reference_path("field-experiments/" + file));
  AnalysisOptions options;
  options.method = method;
  auto r = analyse(table, roles, response, options);
  if (!r.ok()) FAIL(r.problem().message);
  return *r;
}

void check_row(const Analysis& a, const std::string& source, double df, double ss, double ss_tol,
               std::optional<double> f = std::nullopt, double f_tol = 0) {
  const AnovaRow& r = test::row(a, source);
  INFO(source);
  CHECK(r.df == df);
  CHECK(std::abs(r.ss - ss) <= ss_tol);
  if (f) {
    REQUIRE(r.f.has_value());
    CHECK(std::abs(*r.f - *f) <= f_tol);
  }
}

const FitMethod kMethods[] = {FitMethod::automatic, FitMethod::dense};

TEST_CASE("RCBD: Clewer & Scarisbrick (2001), Practical Statistics and Experimental Design for Plant "
          "and Crop Science, Example 10.1, Table 10.1 (wheat varieties in 3 blocks)") {
  DesignRoles roles;
  roles.kind = DesignKind::randomised_complete_block;
  roles.block = "block";
  roles.treatments = {"gen"};
  for (FitMethod m : kMethods) {
    const Analysis a = run("clewer-wheat-rcbd.csv", roles, "yield", m);
    // Book: block 2, 9.78, 4.89, F 12.22; gen 3, 6.63, 2.21, F 5.52; residual 6, 2.40, 0.40; total 11, 18.81.
    check_row(a, "block", 2, 9.78, 0.005, 12.225, 0.005);
    check_row(a, "gen", 3, 6.63, 0.005, 5.525, 0.005);
    check_row(a, "residual", 6, 2.40, 0.005);
    check_row(a, "total", 11, 18.81, 0.005);
    CHECK(a.grand_mean == doctest::Approx(7.25).epsilon(1e-12));
    // Book means: V1 6.50, V2 7.60, V3 6.60, V4 8.30.
    const std::map<std::string, double> book = {{"V1", 6.50}, {"V2", 7.60}, {"V3", 6.60}, {"V4", 8.30}};
    REQUIRE(a.means.size() == 1);
    for (const MeanRow& r : a.means[0].levels) CHECK(std::abs(r.mean - book.at(r.label)) < 0.005);
  }
}

TEST_CASE("Latin square: Cochran & Cox (1957), Experimental Designs, 2nd ed., pp. 122-125 (6 x 6, operators)") {
  DesignRoles roles;
  roles.kind = DesignKind::latin_square;
  roles.row = "row_order";
  roles.column = "col_area";
  roles.treatments = {"operator"};
  for (FitMethod m : kMethods) {
    const Analysis a = run("cochran-latin.csv", roles, "diff", m);
    check_row(a, "row_order", 5, 28.599167, 5e-7, 1.718614, 5e-7);
    check_row(a, "col_area", 5, 78.869167, 5e-7, 4.739496, 5e-7);
    check_row(a, "operator", 5, 155.595833, 5e-7, 9.350243, 5e-7);
    check_row(a, "residual", 20, 66.563333, 5e-7);
    check_row(a, "total", 35, 329.6275, 5e-5);
    // LSD at alpha 0.05: t(0.975; 20) x sqrt(2 x 3.328167 / 6) = 2.197094 (SOURCE.md).
    REQUIRE(a.lsd.has_value());
    CHECK(std::abs(*a.lsd - 2.197094) < 5e-7);
  }
}

TEST_CASE("Latin square on a uniformity trial: Mercer & Hall (1911), J. Agric. Sci. 4, 107-132, Table 1 "
          "(our exact computation from the file, no printed table to compare)") {
  DesignRoles roles;
  roles.kind = DesignKind::latin_square;
  roles.row = "row";
  roles.column = "col";
  roles.treatments = {"trt"};
  const Analysis a = run("mercer-hall-latin.csv", roles, "yield", FitMethod::automatic);
  check_row(a, "row", 4, 4240.24, 5e-7, 7.251083, 5e-7);
  check_row(a, "col", 4, 701.84, 5e-7, 1.200192, 5e-7);
  check_row(a, "trt", 4, 330.24, 5e-7, 0.564732, 5e-7);
  check_row(a, "residual", 12, 1754.32, 5e-7);
}

TEST_CASE("Split-plot: Yates (1935), Complex experiments, JRSS Suppl. 2, 181-247 (oats, varieties on "
          "main plots, nitrogen on sub-plots, 6 blocks)") {
  DesignRoles roles;
  roles.kind = DesignKind::split_plot;
  roles.block = "B";
  roles.main_plot = "V";
  roles.sub_plot = "N";
  for (FitMethod m : kMethods) {
    const Analysis a = run("oats.csv", roles, "Y", m);
    check_row(a, "B", 5, 15875.277778, 5e-6);
    // V is tested against the main-plot error B x V: F 1.485340.
    check_row(a, "V", 2, 1786.361111, 5e-6, 1.485340, 5e-6);
    CHECK(test::row(a, "V").error_term == "B x V");
    check_row(a, "B x V", 10, 6013.305556, 5e-6);
    CHECK_FALSE(test::row(a, "B x V").f.has_value());
    check_row(a, "N", 3, 20020.5, 5e-6, 37.685647, 5e-6);
    check_row(a, "V x N", 6, 321.75, 5e-6, 0.302824, 5e-6);
    check_row(a, "residual", 45, 7968.75, 5e-6);
    check_row(a, "total", 71, 51985.944444, 5e-6);
    // Means printed to two decimals: N 79.39, 98.89, 114.22, 123.39;
    // V Golden.rain 104.50, Marvellous 109.79, Victory 97.63.
    const std::map<std::string, double> book = {{"0.0cwt", 79.39}, {"0.2cwt", 98.89}, {"0.4cwt", 114.22},
                                                {"0.6cwt", 123.39}, {"Golden.rain", 104.50},
                                                {"Marvellous", 109.79}, {"Victory", 97.63}};
    int checked = 0;
    for (const TermMeans& tm : a.means)
      for (const MeanRow& r : tm.levels)
        if (book.count(r.label)) { CHECK(std::abs(r.mean - book.at(r.label)) < 0.005); ++checked; }
    CHECK(checked == 7);
    // The main-plot means carry the main-plot error: SE = sqrt(601.330556 / 24).
    CHECK(a.means[0].term == "V");
    CHECK(a.means[0].levels[0].se == doctest::Approx(std::sqrt(601.330556 / 24)).epsilon(1e-8));
    // Cell means of V x N mix both errors (split-plot standard errors as in
    // Gomez & Gomez 1984, ch. 3, recalled from memory; mean squares from the
    // published table): cell SE sqrt((3 Eb + Ea) / 24); two N levels under one
    // V: SE sqrt(2 Eb / 6) with t(0.975; 45) = 2.014103; two V levels: SE
    // sqrt(2 (3 Eb + Ea) / 24) with t' weighting t(0.975; 10) = 2.228139.
    const double ea = 601.330556, eb = 177.083333;
    const TermMeans& cells = a.means[2];
    REQUIRE(cells.term == "V x N");
    CHECK(cells.levels[0].se == doctest::Approx(std::sqrt((3 * eb + ea) / 24)).epsilon(1e-8));
    int same = 0, other = 0;
    for (const PairComparison& p : cells.pairs) {
      const bool same_v = cells.levels[p.first].levels[0] == cells.levels[p.second].levels[0];
      if (same_v) {
        CHECK(p.se == doctest::Approx(std::sqrt(2 * eb / 6)).epsilon(1e-8));
        CHECK(p.lsd == doctest::Approx(2.014103 * std::sqrt(2 * eb / 6)).epsilon(1e-6));
        ++same;
      } else {
        const double t_mixed = (3 * eb * 2.014103 + ea * 2.228139) / (3 * eb + ea);
        CHECK(p.se == doctest::Approx(std::sqrt(2 * (3 * eb + ea) / 24)).epsilon(1e-8));
        CHECK(p.lsd == doctest::Approx(t_mixed * std::sqrt(2 * (3 * eb + ea) / 24)).epsilon(1e-6));
        ++other;
      }
    }
    CHECK(same == 3 * 6);
    CHECK(other == 66 - 18);
  }
}

TEST_CASE("Factorial in blocks: Yates's oats (1935) read as a 3 x 4 factorial in 6 blocks; the treatment "
          "sums of squares are those of the published table and the error pools its two error lines") {
  DesignRoles roles;
  roles.kind = DesignKind::factorial;
  roles.block = "B";
  roles.treatments = {"V", "N"};
  for (FitMethod m : kMethods) {
    const Analysis a = run("oats.csv", roles, "Y", m);
    check_row(a, "B", 5, 15875.277778, 5e-6);
    check_row(a, "V", 2, 1786.361111, 5e-6);
    check_row(a, "N", 3, 20020.5, 5e-6);
    check_row(a, "V x N", 6, 321.75, 5e-6);
    check_row(a, "residual", 55, 6013.305556 + 7968.75, 1e-5);
  }
}

}  // namespace
}  // namespace furrow
