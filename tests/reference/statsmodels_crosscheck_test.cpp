// Cross-check against Debian's python3-statsmodels (anova_lm, typ=1 for
// sequential and typ=2 for partial sums of squares) on generated data for
// every design kind, balanced and unbalanced. The reference files are made at
// test time by make_statsmodels_cases.py (a CTest fixture). SS, F and P must
// agree to 1e-9 relative.

#include <doctest/doctest.h>

#include <filesystem>
#include <nlohmann/json.hpp>

#include "core/analysis.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

constexpr double kRelative = 1e-9;

DesignRoles roles_from(const nlohmann::json& j) {
  DesignRoles r;
  r.kind = *parse_design_kind(j.at("kind").get<std::string>());
  if (j.contains("treatments")) r.treatments = j["treatments"].get<std::vector<std::string>>();
  r.block = j.value("block", "");
  r.row = j.value("row", "");
  r.column = j.value("column", "");
  r.main_plot = j.value("main_plot", "");
  r.sub_plot = j.value("sub_plot", "");
  r.site = j.value("site", "");
  r.sites_random = j.value("sites_random", false);
  r.without_interaction = j.value("without_interaction", false);
  return r;
}

void check_case(const std::string& name, FitMethod method) {
  const std::string dir = test::generated_path("statsmodels/");
  const auto expected = nlohmann::json::parse(test::read_text(dir + "case_" + name + ".json"));
  const PlotTable table = test::load_csv(dir + "case_" + name + ".csv");
  const DesignRoles roles = roles_from(expected["roles"]);
  for (const auto& [key, rows] : expected["sums"].items()) {
    AnalysisOptions options;
    options.sums = key == "sequential" ? SumsKind::sequential : SumsKind::partial;
    options.method = method;
    options.comparisons = false;
    const auto result = analyse(table, roles, "y", options);
    if (!result.ok()) FAIL(name << ": " << result.problem().message);
    const Analysis& a = *result;
    CHECK(a.n == expected["n"].get<int>());
    for (const auto& [source, want] : rows.items()) {
      INFO(name << ", " << key << " sums, method " << std::string(fit_method_name(a.method)) << ", source " << source);
      const AnovaRow& got = test::row(a, source);
      CHECK(got.df == want["df"].get<double>());
      CHECK(test::close_rel(got.ss, want["ss"].get<double>(), kRelative));
      if (want.contains("f")) {
        REQUIRE(got.f.has_value());
        CHECK(test::close_rel(*got.f, want["f"].get<double>(), kRelative));
        CHECK(test::close_rel(*got.p, want["p"].get<double>(), kRelative));
      } else {
        CHECK_FALSE(got.f.has_value());
      }
    }
  }
}

const char* kCases[] = {"crd", "rcbd", "latin", "factorial2", "factorial3", "splitplot", "multisite_fixed",
                        "multisite_random"};

TEST_SUITE("statsmodels") {
  TEST_CASE("every design kind, balanced, matches statsmodels") {
    for (const char* c : kCases) check_case(std::string(c) + "_balanced", FitMethod::automatic);
  }
  TEST_CASE("every design kind, unbalanced, matches statsmodels") {
    for (const char* c : kCases) check_case(std::string(c) + "_unbalanced", FitMethod::automatic);
  }
  TEST_CASE("the dense method matches statsmodels on every case") {
    for (const char* c : kCases) {
      check_case(std::string(c) + "_balanced", FitMethod::dense);
      check_case(std::string(c) + "_unbalanced", FitMethod::dense);
    }
  }
  TEST_CASE("an entry absent at one site: analysed (statsmodels OLS fits), with the interaction and without it") {
    for (FitMethod method : {FitMethod::automatic, FitMethod::dense, FitMethod::cells}) {
      check_case("multisite_incomplete", method);
      check_case("multisite_incomplete_main_effects", method);
    }
  }
  TEST_CASE("the cells method (programme-scale designs) matches statsmodels on every case") {
    for (const char* c : kCases) {
      check_case(std::string(c) + "_balanced", FitMethod::cells);
      check_case(std::string(c) + "_unbalanced", FitMethod::cells);
    }
  }
  TEST_CASE("the absorbed method matches statsmodels where it applies") {
    for (const char* c : {"crd", "rcbd", "latin"}) {
      check_case(std::string(c) + "_balanced", FitMethod::absorbed);
      check_case(std::string(c) + "_unbalanced", FitMethod::absorbed);
    }
  }
  TEST_CASE("several sites, random entries: variance components and entry-mean heritability from the "
            "statsmodels mean squares (Holland, Nyquist & Cervantes-Martinez 2003, formulas in STATISTICS.md)") {
    const std::string dir = test::generated_path("statsmodels/");
    const std::string name = "multisite_random_balanced";
    const auto j = nlohmann::json::parse(test::read_text(dir + "case_" + name + ".json"));
    DesignRoles roles = roles_from(j["roles"]);
    roles.treatments_random = true;
    const auto r = analyse(test::load_csv(dir + "case_" + name + ".csv"), roles, "y");
    REQUIRE(r.ok());
    const auto& rows = j["sums"]["partial"];
    const double ms_g = rows["entry"]["ms"], ms_ge = rows["site x entry"]["ms"], ms_e = rows["residual"]["ms"];
    const double reps = 3, sites = 5;   // the generated design: 5 sites x 3 blocks
    const double ge = (ms_ge - ms_e) / reps;
    const double gv = (ms_g - ms_ge) / (reps * sites);
    const VarianceComponents& vc = r->variance_components;
    CHECK(vc.sites == sites);
    CHECK(vc.replicates == doctest::Approx(reps).epsilon(1e-12));
    if (ge > 0) CHECK(*vc.treatment_by_site == doctest::Approx(ge).epsilon(1e-9));
    else CHECK(*vc.treatment_by_site == 0.0);
    REQUIRE(gv > 0);
    CHECK(*vc.treatment == doctest::Approx(gv).epsilon(1e-9));
    const double h2 = gv / (gv + std::max(ge, 0.0) / sites + ms_e / (reps * sites));
    CHECK(*vc.heritability == doctest::Approx(h2).epsilon(1e-9));
  }

  TEST_CASE("the automatic method picks the fast paths") {
    const std::string dir = test::generated_path("statsmodels/");
    auto method_of = [&](const std::string& name) {
      const auto j = nlohmann::json::parse(test::read_text(dir + "case_" + name + ".json"));
      const auto r = analyse(test::load_csv(dir + "case_" + name + ".csv"), roles_from(j["roles"]), "y");
      REQUIRE(r.ok());
      return r->method;
    };
    CHECK(method_of("rcbd_balanced") == FitMethod::balanced);
    CHECK(method_of("multisite_random_balanced") == FitMethod::balanced);
    CHECK(method_of("rcbd_unbalanced") == FitMethod::absorbed);
    CHECK(method_of("latin_unbalanced") == FitMethod::absorbed);
    CHECK(method_of("splitplot_unbalanced") == FitMethod::dense);
  }
}

}  // namespace
}  // namespace furrow
