// NIST Statistical Reference Datasets, analysis of variance (public domain;
// shared/reference/nist-strd-anova, SOURCE.md there). Certified values to 15
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

// Layout (SOURCE.md): certified values from line 41 (the residual SD can
// spill to line 48 where the label wraps), data from line 61,
// two columns (treatment label, response). Lines may end in CRLF.
NistSet load_nist(const std::string& name) {
  std::istringstream in(test::read_text(test::reference_path("nist-strd-anova/" + name + ".dat")));
  std::vector<std::string> lines;
  for (std::string l; std::getline(in, l);) {
    if (!l.empty() && l.back() == '\r') l.pop_back();
    lines.push_back(l);
  }
  REQUIRE(lines.size() >= 61);
  NistSet s;
  auto numbers_after_label = [](const std::string& line) {
    // "Between Treatment   8   1.68  2.1E-01  2.1E+01": take the numbers.
    std::istringstream ls(line);
    std::vector<double> v;
    for (std::string w; ls >> w;) {
      try { size_t used = 0; const double x = std::stod(w, &used); if (used == w.size()) v.push_back(x); } catch (...) {}
    }
    return v;
  };
  for (int i = 30; i < 60; ++i) {
    const std::string& l = lines[i];
    const auto v = numbers_after_label(l);
    if (l.find("Between") != std::string::npos) {
      REQUIRE(v.size() == 4);
      s.c.between_df = v[0]; s.c.between_ss = v[1]; s.c.between_ms = v[2]; s.c.f = v[3];
    } else if (l.find("Within") != std::string::npos) {
      REQUIRE(v.size() == 3);
      s.c.within_df = v[0]; s.c.within_ss = v[1]; s.c.within_ms = v[2];
    } else if (l.find("R-Squared") != std::string::npos) {
      s.c.r_squared = v.back();
    } else if (l.find("Standard Deviation") != std::string::npos) {
      s.c.residual_sd = v.back();
    }
  }
  REQUIRE(s.c.within_df > 0);
  s.table.columns = {{"group", {}}, {"y", {}}};
  for (size_t i = 60; i < lines.size(); ++i) {
    std::istringstream ls(lines[i]);
    std::string g, y;
    if (!(ls >> g >> y)) continue;
    s.table.columns[0].cells.push_back(g);
    s.table.columns[1].cells.push_back(y);   // kept as text: read exactly
  }
  return s;
}

void check_dataset(const std::string& name, FitMethod method) {
  const NistSet s = load_nist(name);
  DesignRoles roles;
  roles.kind = DesignKind::completely_randomised;
  roles.treatments = {"group"};
  AnalysisOptions options;
  options.method = method;
  const auto r = analyse(s.table, roles, "y", options);
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
