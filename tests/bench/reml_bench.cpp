// REML benchmark (prints figures; not part of ctest). Growth is measured by
// doubling the size:
//  - several sites: 12 sites x 3 blocks x 100 / 200 / 400 / 800 entries
//    (3,600 to 28,800 plots; 14,400 is the programme-scale trial), 3 % of
//    plots missing and one entry absent at one site; sites and entry x site
//    random, blocks within sites random, entries fixed - then entries random
//    (BLUPs and heritability);
//  - field trend at one site: 500 / 1,000 / 2,000 / 4,000 plots in 4 blocks,
//    entries fixed, AR1 x AR1 plus plot error against independent errors.
// Data are simulated with RandomStream (the same on every machine).
//   build/tests/reml_bench            all sizes
//   build/tests/reml_bench quick      the two smallest of each
//   build/tests/reml_bench trend      the field-trend sizes only

#include <chrono>
#include <cmath>
#include <cstdio>
#include <algorithm>
#include <string>
#include <thread>

#include "core/mixed_analysis.h"
#include "core/random_stream.h"

namespace {

using furrow::PlotTable;

struct Normal {
  furrow::RandomStream rs;
  explicit Normal(std::uint64_t seed) : rs(seed) {}
  double uniform() { return (static_cast<double>(rs.next() >> 11) + 0.5) / 9007199254740992.0; }
  double operator()() { return std::sqrt(-2.0 * std::log(uniform())) * std::cos(6.283185307179586 * uniform()); }
};

std::string number(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.3f", v);
  return buf;
}

PlotTable sites_trial(int sites, int entries) {
  Normal z(20261202 + entries);
  PlotTable t;
  t.columns = {{"site", {}}, {"block", {}}, {"entry", {}}, {"y", {}}};
  std::vector<double> g(entries);
  for (auto& v : g) v = 2 * z();
  for (int s = 0; s < sites; ++s) {
    const double se = 5 * z();
    std::vector<double> ge(entries);
    for (auto& v : ge) v = z();
    for (int b = 0; b < 3; ++b) {
      const double bl = z();
      for (int e = 0; e < entries; ++e) {
        t.columns[0].cells.push_back("S" + std::to_string(s));
        t.columns[1].cells.push_back(std::to_string(b + 1));
        t.columns[2].cells.push_back("E" + std::to_string(e));
        const bool missing = z.uniform() < 0.03 || (s == 2 && e == entries - 1);
        t.columns[3].cells.push_back(missing ? "" : number(60 + se + bl + g[e] + ge[e] + 1.5 * z()));
      }
    }
  }
  return t;
}

PlotTable field_trial(int rows, int cols) {
  Normal z(777 + rows * cols);
  const int plots = rows * cols, per_block = plots / 4;
  std::vector<double> field(plots), prev(rows);
  for (int c = 0; c < cols; ++c) {
    std::vector<double> e(rows);
    e[0] = z();
    for (int r = 1; r < rows; ++r) e[r] = 0.6 * e[r - 1] + 0.8 * z();
    for (int r = 0; r < rows; ++r) {
      field[c * rows + r] = c == 0 ? e[r] : 0.4 * prev[r] + std::sqrt(1 - 0.16) * e[r];
      prev[r] = field[c * rows + r];
    }
  }
  std::vector<double> g(per_block);
  for (auto& v : g) v = z();
  PlotTable t;
  t.columns = {{"row", {}}, {"col", {}}, {"block", {}}, {"entry", {}}, {"y", {}}};
  for (int r = 0; r < rows; ++r)
    for (int c = 0; c < cols; ++c) {
      const int i = r * cols + c, b = i / per_block;
      const int e = (i % per_block * 7 + b * 13) % per_block;
      t.columns[0].cells.push_back(std::to_string(r + 1));
      t.columns[1].cells.push_back(std::to_string(c + 1));
      t.columns[2].cells.push_back(std::to_string(b + 1));
      t.columns[3].cells.push_back("E" + std::to_string(e));
      t.columns[4].cells.push_back(number(20 + g[e] + field[c * rows + r] + 0.5 * z()));
    }
  return t;
}

double seconds_since(std::chrono::steady_clock::time_point t0) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
}

}  // namespace

int main(int argc, char** argv) {
  const std::string mode = argc > 1 ? argv[1] : "";
  const bool quick = mode == "quick";
  const bool trend_only = mode == "trend";   // only the field-trend sizes (for profiling)
  std::printf("REML benchmark (several sites: one thread; field trend: its four starts on up to %u threads)\n\n",
              std::max(1u, std::min(4u, std::thread::hardware_concurrency())));
  std::printf("several sites, 12 sites x 3 blocks, 3 %% missing, one entry absent at one site\n");
  std::printf("%8s %8s  %-16s %9s %6s %14s\n", "entries", "plots", "entries are", "seconds", "iter", "log-likelihood");
  for (int entries : {100, 200, 400, 800}) {
    if ((quick && entries > 200) || trend_only) break;
    const PlotTable t = sites_trial(12, entries);
    for (bool random_entries : {false, true}) {
      furrow::DesignRoles roles;
      roles.kind = furrow::DesignKind::multi_site;
      roles.site = "site";
      roles.block = "block";
      roles.treatments = {"entry"};
      roles.sites_random = true;
      roles.treatments_random = random_entries;
      furrow::MixedAnalysisOptions o;
      const auto t0 = std::chrono::steady_clock::now();
      const auto a = furrow::analyse_reml(t, roles, "y", o);
      const double s = seconds_since(t0);
      if (!a) { std::printf("failed: %s\n", a.problem().message.c_str()); return 1; }
      std::printf("%8d %8d  %-16s %9.2f %6d %14.4f%s\n", entries, t.records(), random_entries ? "random" : "fixed", s,
                  a->iterations, a->loglik, a->converged ? "" : "  (not converged)");
      std::fflush(stdout);
    }
  }
  std::printf("\nfield trend at one site (AR1 x AR1 + plot error, and independent errors), 4 blocks, entries fixed\n");
  std::printf("%8s %8s %9s %9s %8s %8s %6s\n", "plots", "entries", "seconds", "LR", "rho row", "rho col", "kept");
  for (auto [rows, cols] : {std::pair{25, 20}, std::pair{40, 25}, std::pair{50, 40}, std::pair{80, 50}}) {
    if ((quick && rows * cols > 1000) || (trend_only && rows * cols > 2000)) break;
    const PlotTable t = field_trial(rows, cols);
    furrow::DesignRoles roles;
    roles.kind = furrow::DesignKind::randomised_complete_block;
    roles.block = "block";
    roles.treatments = {"entry"};
    furrow::MixedAnalysisOptions o;
    o.trend = furrow::FieldTrendChoice::test;
    o.row_column = "row";
    o.col_column = "col";
    const auto t0 = std::chrono::steady_clock::now();
    const auto a = furrow::analyse_reml(t, roles, "y", o);
    const double s = seconds_since(t0);
    if (!a) { std::printf("failed: %s\n", a.problem().message.c_str()); return 1; }
    std::printf("%8d %8d %9.2f %9.1f %8.3f %8.3f %6s\n", rows * cols, rows * cols / 4, s, a->trend->lr_statistic,
                a->trend->rho_row, a->trend->rho_col, a->trend->chosen ? "yes" : "no");
    std::fflush(stdout);
  }
  return 0;
}
