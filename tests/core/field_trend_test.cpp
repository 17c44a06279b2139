// Field trend (AR1 x AR1 plus plot error; Gilmour, Cullis & Verbyla 1997)
// on simulated trials. A simulation is the outside reference here: the
// truth is known because the data are drawn from it.
//  - With a fertility field of known row and column autocorrelation, over 50
//    seeds: the trend model is kept, the average estimate lies within one
//    average SE of the truth, the estimates' spread across seeds is within
//    1.5 times the average SE, and the truth lies within two SEs of the
//    estimate in at least 80 % of seeds (95 % nominal; SEs from the inverse
//    average information are known to run somewhat small for correlation
//    parameters in trials of a few hundred plots - measured here: spread
//    0.137 against SE 0.115 down rows).
//  - With no trend, over 50 seeds: the trend model is kept no more often than
//    the test's nominal 5 % allows (at most 5 of 50: the expected 2.5 plus two
//    binomial standard deviations).
// Draws: RandomStream (xoshiro256**) with Box-Muller normals, the same on
// every platform.

#include <doctest/doctest.h>

#include <cmath>
#include <cstdio>
#include <vector>

#include "core/mixed_analysis.h"
#include "core/random_stream.h"

namespace furrow {
namespace {

struct Normal {
  RandomStream rs;
  explicit Normal(std::uint64_t seed) : rs(seed) {}
  double uniform() { return (static_cast<double>(rs.next() >> 11) + 0.5) / 9007199254740992.0; }
  double operator()() {
    const double u = uniform(), v = uniform();
    return std::sqrt(-2.0 * std::log(u)) * std::cos(6.283185307179586 * v);
  }
};

// 24 rows x 10 columns, 4 blocks of 6 rows, 60 entries once per block; the
// field is AR1 x AR1 drawn by its two AR1 recursions (exact), plus plot error.
PlotTable simulated_trial(std::uint64_t seed, double rho_row, double rho_col, double field_sd, double error_sd) {
  Normal z(seed);
  const int rows = 24, cols = 10;
  std::vector<double> field(static_cast<size_t>(rows) * cols, 0.0);
  if (field_sd > 0) {
    // Columns: an AR1 sequence of independent AR1 row-sequences (separable process).
    std::vector<double> prev(rows, 0.0);
    for (int c = 0; c < cols; ++c) {
      std::vector<double> e(rows);
      e[0] = z();
      for (int r = 1; r < rows; ++r) e[r] = rho_row * e[r - 1] + std::sqrt(1 - rho_row * rho_row) * z();
      for (int r = 0; r < rows; ++r) {
        const double v = c == 0 ? e[r] : rho_col * prev[r] + std::sqrt(1 - rho_col * rho_col) * e[r];
        field[c * rows + r] = v;
        prev[r] = v;
      }
    }
  }
  std::vector<double> entry(60);
  for (auto& v : entry) v = 1.0 * z();
  PlotTable t;
  t.columns = {{"row", {}}, {"col", {}}, {"block", {}}, {"entry", {}}, {"y", {}}};
  for (int r = 0; r < rows; ++r)
    for (int c = 0; c < cols; ++c) {
      const int b = r / 6;
      // Entries spread over each block's 60 plots in a shifted pattern.
      const int e = ((r % 6) * 10 + c + 17 * b) % 60;
      const double y = 20 + entry[e] + 0.5 * b + field_sd * field[c * rows + r] + error_sd * z();
      char buf[32];
      std::snprintf(buf, sizeof buf, "%.4f", y);
      t.columns[0].cells.push_back(std::to_string(r + 1));
      t.columns[1].cells.push_back(std::to_string(c + 1));
      t.columns[2].cells.push_back(std::to_string(b + 1));
      t.columns[3].cells.push_back("E" + std::to_string(e));
      t.columns[4].cells.push_back(buf);
    }
  return t;
}

DesignRoles roles() {
  DesignRoles r;
  r.kind = DesignKind::randomised_complete_block;
  r.block = "block";
  r.treatments = {"entry"};
  return r;
}

MixedAnalysisOptions trend_options() {
  MixedAnalysisOptions o;
  o.trend = FieldTrendChoice::test;
  o.row_column = "row";
  o.col_column = "col";
  o.comparisons = false;
  return o;
}

TEST_SUITE("trend") {
TEST_CASE("field trend: the autocorrelations of a known gradient are recovered over 50 seeds") {
  const double rho_r = 0.6, rho_c = 0.4;
  int kept = 0, covered_r = 0, covered_c = 0;
  double sum_r = 0, sum_c = 0, sum_se_r = 0, sum_se_c = 0, sq_r = 0, sq_c = 0;
  for (int seed = 1; seed <= 50; ++seed) {
    const PlotTable t = simulated_trial(1000 + seed, rho_r, rho_c, 1.0, 0.5);
    auto a = analyse_reml(t, roles(), "y", trend_options());
    REQUIRE_MESSAGE(a.ok(), (a.ok() ? "" : a.problem().message));
    REQUIRE(a->trend.has_value());
    const FieldTrendFit& f = *a->trend;
    kept += f.chosen;
    sum_r += f.rho_row;
    sum_c += f.rho_col;
    sq_r += f.rho_row * f.rho_row;
    sq_c += f.rho_col * f.rho_col;
    sum_se_r += f.rho_row_se;
    sum_se_c += f.rho_col_se;
    covered_r += std::abs(f.rho_row - rho_r) <= 2 * f.rho_row_se;
    covered_c += std::abs(f.rho_col - rho_c) <= 2 * f.rho_col_se;
    CHECK(f.trend.size() == 240u);
  }
  const double mean_r = sum_r / 50, mean_c = sum_c / 50, se_r = sum_se_r / 50, se_c = sum_se_c / 50;
  MESSAGE("kept " << kept << "/50; row rho " << mean_r << " (SE " << se_r << ", covered " << covered_r
                  << "/50); column rho " << mean_c << " (SE " << se_c << ", covered " << covered_c << "/50)");
  CHECK(kept >= 45);
  CHECK(std::abs(mean_r - rho_r) < se_r);
  CHECK(std::abs(mean_c - rho_c) < se_c);
  const double sd_r = std::sqrt(std::max(0.0, sq_r / 50 - mean_r * mean_r));
  const double sd_c = std::sqrt(std::max(0.0, sq_c / 50 - mean_c * mean_c));
  MESSAGE("spread across seeds: row " << sd_r << ", column " << sd_c);
  CHECK(sd_r < 1.5 * se_r);
  CHECK(sd_c < 1.5 * se_c);
  CHECK(covered_r >= 40);
  CHECK(covered_c >= 40);
}

TEST_CASE("field trend: on trials with no trend it is kept no more often than the nominal 5 %") {
  int kept = 0;
  for (int seed = 1; seed <= 50; ++seed) {
    const PlotTable t = simulated_trial(5000 + seed, 0, 0, 0.0, 1.0);
    auto a = analyse_reml(t, roles(), "y", trend_options());
    REQUIRE_MESSAGE(a.ok(), (a.ok() ? "" : a.problem().message));
    kept += a->trend->chosen;
    if (!a->trend->chosen) CHECK(a->differs_because.empty());
  }
  MESSAGE("trend kept on " << kept << " of 50 trials without trend");
  CHECK(kept <= 5);
}

}  // TEST_SUITE

}  // namespace
}  // namespace furrow
