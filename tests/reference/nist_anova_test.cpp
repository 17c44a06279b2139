// NIST Statistical Reference Datasets, analysis of variance (public domain;
// tests/reference/data/nist-strd-anova, SOURCE.md there). Certified values to 15
// digits; we ask for at least 12 correct digits (log relative error,
// McCullough 1998, The American Statistician 52, 358-366) on every dataset
// and with every fitting method that applies to a one-way layout.

#include <doctest/doctest.h>

#include <algorithm>
#include <sstream>

#include "core/analysis.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

struct Certified {
  double between_df, between_ss, between_ms, f;
  double within_df, within_ss, within_ms;
  double r_squared, residual_sd;
};

struct NistSet {
  PlotTable table;
  Certified c{};
};

// Our copy (tests/reference/data/nist-strd-anova, SOURCE.md there): SET.csv
// holds the observations (group, response as printed), certified.csv one line
// per set with the certified table.
std::vector<std::string> split_commas(const std::string& line) {
  std::vector<std::string> f;
  std::stringstream ss(line);
  for (std::string x; std::getline(ss, x, ',');) f.push_back(x);
  return f;
}

Certified load_certified(const std::string& name) {
  std::istringstream in(test::read_text(test::reference_path("nist-strd-anova/certified.csv")));
  std::string line;
  std::getline(in, line);
  REQUIRE(line == "set,between_df,between_ss,between_ms,between_f,within_df,within_ss,within_ms,r_squared,residual_sd");
  while (std::getline(in, line)) {
    const auto f = split_commas(line);
    REQUIRE(f.size() == 10);
    if (f[0] != name) continue;
    Certified c;
    c.between_df = std::stod(f[1]); c.between_ss = std::stod(f[2]); c.between_ms = std::stod(f[3]); c.f = std::stod(f[4]);
    c.within_df = std::stod(f[5]); c.within_ss = std::stod(f[6]); c.within_ms = std::stod(f[7]);
    c.r_squared = std::stod(f[8]); c.residual_sd = std::stod(f[9]);
    return c;
  }
  FAIL("no certified values for " << name);
  return {};
}

NistSet load_nist(const std::string& name) {
  NistSet s;
  s.c = load_certified(name);
  s.table = test::load_csv(test::reference_path("nist-strd-anova/" + name + ".csv"));   // cells kept as text: read exactly
  REQUIRE(s.table.columns.size() == 2);
  REQUIRE(s.table.columns[0].name == "group");
  REQUIRE(s.table.columns[1].name == "response");
  // Observation counts stated by NIST for each set (SOURCE.md).
  const size_t n = s.table.columns[0].cells.size();
  INFO(name << ".csv: " << n << " observations");
  CHECK(double(n) == s.c.between_df + s.c.within_df + 1);
  return s;
}

void check_dataset(const std::string& name, FitMethod method) {
  const NistSet s = load_nist(name);
  DesignRoles roles;
  roles.kind = DesignKind::completely_randomised;
  roles.treatments = {"group"};
  AnalysisOptions options;
  options.method = method;
  const auto r = analyse(s.table, roles, "response", options);
  if (!r.ok()) FAIL(r.problem().message);
  const Analysis& a = *r;
  const AnovaRow& between = test::row(a, "group");
  const AnovaRow& within = test::row(a, "residual");
  INFO(name << " with the " << std::string(fit_method_name(a.method)) << " method");
  CHECK(between.df == s.c.between_df);
  CHECK(within.df == s.c.within_df);
  constexpr double kDigits = 12.0;
  CHECK(test::lre(between.ss, s.c.between_ss) >= kDigits);
  CHECK(test::lre(*between.ms, s.c.between_ms) >= kDigits);
  CHECK(test::lre(*between.f, s.c.f) >= kDigits);
  CHECK(test::lre(within.ss, s.c.within_ss) >= kDigits);
  CHECK(test::lre(*within.ms, s.c.within_ms) >= kDigits);
  CHECK(test::lre(a.r_squared, s.c.r_squared) >= kDigits);
  CHECK(test::lre(a.residual_sd, s.c.residual_sd) >= kDigits);
  if (method != FitMethod::automatic) CHECK(a.method == method);
  const double fewest = std::min({test::lre(between.ss, s.c.between_ss), test::lre(*between.ms, s.c.between_ms),
                                  test::lre(*between.f, s.c.f), test::lre(within.ss, s.c.within_ss),
                                  test::lre(*within.ms, s.c.within_ms), test::lre(a.r_squared, s.c.r_squared),
                                  test::lre(a.residual_sd, s.c.residual_sd)});
  MESSAGE(name << " (" << std::string(fit_method_name(a.method)) << "): fewest correct digits " << fewest);
}

const char* kSets[] = {"SiRstv", "SmLs01", "SmLs02", "SmLs03", "AtmWtAg", "SmLs04",
                       "SmLs05", "SmLs06", "SmLs07", "SmLs08", "SmLs09"};

TEST_CASE("NIST StRD ANOVA: 12 or more correct digits, automatic method") {
  for (const char* name : kSets) check_dataset(name, FitMethod::automatic);
}

TEST_CASE("NIST StRD ANOVA: 12 or more correct digits, absorbed method") {
  for (const char* name : kSets) check_dataset(name, FitMethod::absorbed);
}

TEST_CASE("NIST StRD ANOVA: 12 or more correct digits, dense pivoted QR") {
  // The dense path on the largest sets (18,009 x 10) is the slowest part of the
  // suite but it is the path unbalanced designs take.
  for (const char* name : kSets) check_dataset(name, FitMethod::dense);
}

}  // namespace
}  // namespace furrow
