// Summaries around the table: variance components, outliers, missing cells,
// and the problems bad input must give.

#include "core/analysis.h"

#include <doctest/doctest.h>

#include <random>

#include "tests/test_support.h"

namespace furrow {
namespace {

using test::clewer;
using test::rcbd_roles;

TEST_CASE("variance components for random entries in blocks (Falconer & Mackay 1996; Holland et al. 2003): "
          "Clewer & Scarisbrick Table 10.1 mean squares 2.21 and 0.40, r = 3") {
  DesignRoles roles = rcbd_roles();
  roles.treatments_random = true;
  const auto a = analyse(clewer(), roles, "yield");
  REQUIRE(a.ok());
  const VarianceComponents& vc = a->variance_components;
  REQUIRE(vc.treatment.has_value());
  CHECK(*vc.treatment == doctest::Approx((2.21 - 0.40) / 3).epsilon(1e-12));
  CHECK(*vc.error == doctest::Approx(0.40).epsilon(1e-12));
  // Balanced: H2 = 1 - MS e / MS g.
  CHECK(*vc.heritability == doctest::Approx(1 - 0.40 / 2.21).epsilon(1e-12));
  CHECK(vc.replicates == doctest::Approx(3.0));
  // Shares of the total SS: 9.78, 6.63 and 2.40 of 18.81.
  REQUIRE(vc.shares.size() == 3);
  CHECK(vc.shares[0].share == doctest::Approx(9.78 / 18.81).epsilon(1e-12));
}

TEST_CASE("fixed entries: no treatment variance, with a note saying why") {
  const auto a = analyse(clewer(), rcbd_roles(), "yield");
  REQUIRE(a.ok());
  CHECK_FALSE(a->variance_components.treatment.has_value());
  CHECK_FALSE(a->variance_components.notes.empty());
}

TEST_CASE("summaries follow STATISTICS.md: CV, LSD, HSD and detectable difference on Clewer's trial") {
  const auto a = analyse(clewer(), rcbd_roles(), "yield");
  REQUIRE(a.ok());
  CHECK(a->cv_percent == doctest::Approx(100 * std::sqrt(0.40) / 7.25).epsilon(1e-12));
  // t(0.975; 6) = 2.446912 (standard t table, 6 decimals).
  CHECK(*a->lsd == doctest::Approx(2.446912 * std::sqrt(2 * 0.40 / 3)).epsilon(1e-6));
  // q(0.95; 4, 6) = 4.896 (Harter 1960 / Gleason 1998 tables, 4 digits).
  CHECK(*a->hsd == doctest::Approx(4.896 * std::sqrt(0.40 / 3)).epsilon(2e-4));
  // The detectable difference at 80 % power is the exact noncentral-t root:
  // 3.366894895 standard errors at 6 error DF (scipy: the power integrated
  // over the chi-square, tests/reference/make_detectable_difference_cases.py),
  // not t(0.975; 6) + t(0.80; 6) = 2.446912 + 0.905703 (standard t table),
  // whose real power is 0.797.
  CHECK(*a->mdd_percent == doctest::Approx(100 * 3.366894895 * std::sqrt(2 * 0.40 / 3) / 7.25).epsilon(1e-6));
}

PlotTable rcbd_with_outlier(double bad_value) {
  std::mt19937 rng(7);
  std::normal_distribution<double> noise(0, 1);
  PlotTable t;
  t.columns = {{"block", {}}, {"entry", {}}, {"y", {}}};
  for (int b = 1; b <= 4; ++b)
    for (int e = 1; e <= 10; ++e) {
      t.columns[0].cells.push_back(std::to_string(b));
      t.columns[1].cells.push_back("E" + std::to_string(e));
      double v = 50 + e + b + noise(rng);
      if (b == 3 && e == 6) v = bad_value;
      char buf[32];
      std::snprintf(buf, sizeof buf, "%.2f", v);
      t.columns[2].cells.push_back(buf);
    }
  return t;
}

TEST_CASE("a gross error is the one flagged plot, by threshold and by Bonferroni-Holm") {
  DesignRoles roles = rcbd_roles();
  roles.treatments = {"entry"};
  const PlotTable t = rcbd_with_outlier(5.0);   // a decimal slip: 56 read as 5.6 would be similar
  for (OutlierRule rule : {OutlierRule::threshold, OutlierRule::bonferroni_holm}) {
    AnalysisOptions o;
    o.outlier_rule = rule;
    const auto a = analyse(t, roles, "y", o);
    REQUIRE(a.ok());
    REQUIRE(a->outliers.size() == 1);
    CHECK(a->outliers[0].record == 2 * 10 + 5);
    CHECK(a->outliers[0].value == doctest::Approx(5.0));
    // Entry 6 in block 3 would be about 50 + 6 + 3 (the generating means).
    CHECK(std::abs(a->outliers[0].expected - 59.0) < 2.0);
    CHECK(a->outliers[0].studentized_external < -kOutlierStudentizedThreshold);
    if (rule == OutlierRule::bonferroni_holm) CHECK(*a->outliers[0].p_holm < 0.05);
  }
  const auto clean = analyse(rcbd_with_outlier(61.0), roles, "y");
  REQUIRE(clean.ok());
  CHECK(clean->outliers.empty());
}

TEST_CASE("missing plots are listed as block x treatment cells with their records") {
  PlotTable t = clewer();
  t.columns[4].cells[5] = "";
  const auto a = analyse(t, rcbd_roles(), "yield");
  REQUIRE(a.ok());
  REQUIRE(a->missing_cells.size() == 1);
  CHECK(a->missing_cells[0].records == std::vector<int>{5});
  CHECK(a->missing_cells[0].label == "block " + t.find("block")->cells[5] + " x gen " + t.find("gen")->cells[5]);
  CHECK(a->n == 11);
  CHECK(a->n_missing == 1);
}

TEST_CASE("bad input gives a Problem naming column and record") {
  PlotTable t = clewer();
  SUBCASE("missing column") {
    const auto a = analyse(t, rcbd_roles(), "grain");
    REQUIRE_FALSE(a.ok());
    CHECK(a.problem().column == "grain");
  }
  SUBCASE("text in a number") {
    t.columns[4].cells[3] = "7,5";
    const auto a = analyse(t, rcbd_roles(), "yield");
    REQUIRE_FALSE(a.ok());
    CHECK(a.problem().column == "yield");
    CHECK(a.problem().record == 3);
  }
  SUBCASE("one level only") {
    for (auto& c : t.columns[2].cells) c = "B1";
    const auto a = analyse(t, rcbd_roles(), "yield");
    REQUIRE_FALSE(a.ok());
    CHECK(a.problem().column == "block");
    CHECK(a.problem().message.find("only one level") != std::string::npos);
  }
  SUBCASE("an empty treatment cell in a factorial: analysed, the cell named, the means it leaves out said") {
    PlotTable f;
    f.columns = {{"a", {"1", "1", "2", "2", "1", "2"}}, {"b", {"x", "y", "x", "x", "x", "x"}},
                 {"y", {"1", "2", "3", "4", "5", "6"}}};
    DesignRoles r;
    r.kind = DesignKind::factorial;
    r.treatments = {"a", "b"};
    const auto a = analyse(f, r, "y");
    REQUIRE(a.ok());
    bool named = false;
    for (const std::string& n : a->notes) named = named || n.find("no plot has a value in 1 cell of 'a x b': a 2 x b y") == 0;
    CHECK(named);
    CHECK(a->means[0].note == "1 of 2 means not estimable: 2 (no plot in a 2 x b y)");
    CHECK(a->means[1].note == "1 of 2 means not estimable: y (no plot in a 2 x b y)");
  }
  SUBCASE("no error degrees of freedom") {
    PlotTable f;
    f.columns = {{"t", {"a", "b", "c"}}, {"y", {"1", "2", "3"}}};
    DesignRoles r;
    r.kind = DesignKind::completely_randomised;
    r.treatments = {"t"};
    const auto a = analyse(f, r, "y");
    REQUIRE_FALSE(a.ok());
    CHECK(a.problem().message.find("no degrees of freedom for error") != std::string::npos);
  }
}

TEST_CASE("several responses with one missing pattern share one factorisation and equal single analyses") {
  PlotTable t = clewer();
  DataColumn copy = t.columns[4];
  copy.name = "yield_copy";
  t.columns.push_back(copy);
  const auto all = analyse_all(t, rcbd_roles(), {"yield", "yield_copy"});
  REQUIRE(all.size() == 2);
  REQUIRE(all[0].ok());
  REQUIRE(all[1].ok());
  CHECK(all[0]->table[1].ss == all[1]->table[1].ss);
}

}  // namespace
}  // namespace furrow

namespace furrow {
namespace {

TEST_CASE("every plot's fit: residuals square up to the published residual SS of Clewer's trial") {
  // Clewer & Scarisbrick (2001), Table 10.1: residual SS 2.40 on 6 DF, 12 plots.
  const auto a = analyse(clewer(), rcbd_roles(), "yield");
  REQUIRE(a.ok());
  REQUIRE(a->fits.size() == 12);
  double sum_e = 0, sum_e2 = 0, sum_t2 = 0;
  for (size_t i = 0; i < a->fits.size(); ++i) {
    const PlotFit& f = a->fits[i];
    CHECK(f.record == static_cast<int>(i));
    CHECK(f.value - f.fitted == doctest::Approx(f.residual).epsilon(1e-12));
    sum_e += f.residual;
    sum_e2 += f.residual * f.residual;
    sum_t2 += f.studentized * f.studentized;
  }
  CHECK(sum_e == doctest::Approx(0.0).epsilon(1e-12));
  CHECK(sum_e2 == doctest::Approx(2.40).epsilon(1e-9));
  // In an RCBD every plot has leverage (b + t - 1) / (b t), so 1 - h =
  // (b - 1)(t - 1) / (b t) and the squared internally studentized residuals
  // sum to residual DF / (1 - h) = b t = 12.
  CHECK(sum_t2 == doctest::Approx(12.0).epsilon(1e-9));
}

}  // namespace
}  // namespace furrow
