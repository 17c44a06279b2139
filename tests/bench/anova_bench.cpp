// anova_bench: times Furrow and statsmodels (Debian's /usr/bin/python3) on the
// same generated data in one run and prints both and their ratio.
//   (a) breeding trial: 500 entries x 4 blocks, 3 % of plots missing, 20 traits,
//       RCBD, full analysis of every trait (table, means, LSD, outliers);
//   (b) variety trial: 25 entries x 4 blocks at 6 sites, 20 traits, several sites;
//   (c) one trait of (a) refitted after one new value arrives.
// Goals: (a) < 20 ms and >= 1000x statsmodels; (b) < 20 ms; (c) < 2 ms.
//
// usage: anova_bench [--skip-statsmodels] [--repeats N]

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>
#include <string>
#include <vector>

#include "core/analysis.h"

namespace {

using furrow::AnalysisOptions;
using furrow::DesignKind;
using furrow::DesignRoles;
using furrow::PlotTable;

constexpr int kTraits = 20;

std::vector<std::string> trait_names() {
  std::vector<std::string> n;
  for (int i = 1; i <= kTraits; ++i) {
    char b[8];
    std::snprintf(b, sizeof b, "t%02d", i);
    n.push_back(b);
  }
  return n;
}

std::string fmt(double v) {
  char b[32];
  std::snprintf(b, sizeof b, "%.2f", v);
  return b;
}

// Entries x blocks (x sites); `missing_fraction` of plots lose every trait.
PlotTable make_trial(int entries, int blocks, int sites, double missing_fraction, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> z(0, 1);
  std::uniform_real_distribution<double> u(0, 1);
  PlotTable t;
  if (sites > 1) t.columns.push_back({"site", {}});
  t.columns.push_back({"block", {}});
  t.columns.push_back({"entry", {}});
  const auto names = trait_names();
  for (const auto& n : names) t.columns.push_back({n, {}});
  std::vector<std::vector<double>> entry_effect(kTraits, std::vector<double>(entries));
  for (auto& row : entry_effect) for (double& e : row) e = 2 * z(rng);
  for (int s = 0; s < sites; ++s)
    for (int b = 0; b < blocks; ++b)
      for (int e = 0; e < entries; ++e) {
        size_t c = 0;
        if (sites > 1) t.columns[c++].cells.push_back("S" + std::to_string(s + 1));
        t.columns[c++].cells.push_back(std::to_string(b + 1));
        t.columns[c++].cells.push_back("G" + std::to_string(e + 1));
        const bool lost = u(rng) < missing_fraction;
        for (int k = 0; k < kTraits; ++k)
          t.columns[c + k].cells.push_back(lost ? "" : fmt(40 + 3 * k + entry_effect[k][e] + 0.5 * b + s + z(rng)));
      }
  return t;
}

void write_csv(const PlotTable& t, const std::string& path) {
  std::ofstream f(path);
  for (size_t c = 0; c < t.columns.size(); ++c) f << (c ? "," : "") << t.columns[c].name;
  f << "\n";
  for (int r = 0; r < t.records(); ++r) {
    for (size_t c = 0; c < t.columns.size(); ++c) f << (c ? "," : "") << t.columns[c].cells[r];
    f << "\n";
  }
}

template <class F>
double median_ms(F f, int repeats) {
  std::vector<double> ms;
  for (int i = 0; i < repeats; ++i) {
    const auto t0 = std::chrono::steady_clock::now();
    f();
    ms.push_back(std::chrono::duration<double, std::milli>(std::chrono::steady_clock::now() - t0).count());
  }
  std::sort(ms.begin(), ms.end());
  return ms[ms.size() / 2];
}

double json_number(const std::string& text, const std::string& key) {
  const auto p = text.find("\"" + key + "\"");
  if (p == std::string::npos) return -1;
  return std::atof(text.c_str() + text.find(':', p) + 1);
}

}  // namespace

int main(int argc, char** argv) {
  bool skip_python = false;
  bool refit_only = false;   // for profiling (c) alone
  int repeats = 21;
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    if (a == "--skip-statsmodels") skip_python = true;
    else if (a == "--repeats" && i + 1 < argc) repeats = std::atoi(argv[++i]);
    else if (a == "--refit-only") refit_only = true;
  }
  const auto names = trait_names();
  const PlotTable breeding = make_trial(500, 4, 1, 0.03, 1);
  const PlotTable sites = make_trial(25, 4, 6, 0.0, 2);
  // (c): one value arrives for trait t01 on a plot that was missing.
  PlotTable refit = breeding;
  for (int r = 0; r < refit.records(); ++r)
    if (refit.columns[2].cells[r].empty()) { refit.columns[2].cells[r] = "41.00"; break; }

  DesignRoles rcbd;
  rcbd.kind = DesignKind::randomised_complete_block;
  rcbd.block = "block";
  rcbd.treatments = {"entry"};
  DesignRoles multi;
  multi.kind = DesignKind::multi_site;
  multi.site = "site";
  multi.block = "block";
  multi.treatments = {"entry"};
  AnalysisOptions options;
  options.comparisons = false;   // table, means with SE, LSD, outliers
  AnalysisOptions with_hsd;

  if (refit_only) {
    const double ms = median_ms([&] { auto r = furrow::analyse(refit, rcbd, "t01", options); }, repeats);
    std::printf("(c) refit: %.3f ms\n", ms);
    return 0;
  }
  int plots_missing = 0;
  for (const auto& c : breeding.columns[2].cells) plots_missing += c.empty();
  std::printf("anova_bench: %d repeats, median wall time\n", repeats);
  std::printf("(a) breeding RCBD: 500 entries x 4 blocks, %d of 2000 plots missing, %d traits\n", plots_missing, kTraits);
  const double a_ms = median_ms([&] { auto r = furrow::analyse_all(breeding, rcbd, names, options); }, repeats);
  std::printf("(b) several sites: 25 entries x 4 blocks x 6 sites, %d traits\n", kTraits);
  const double b_ms = median_ms([&] { auto r = furrow::analyse_all(sites, multi, names, options); }, repeats);
  const double b_hsd_ms = median_ms([&] { auto r = furrow::analyse_all(sites, multi, names, with_hsd); }, 3);
  const double c_ms = median_ms([&] { auto r = furrow::analyse(refit, rcbd, "t01", options); }, repeats * 5);
  {
    auto check = furrow::analyse_all(breeding, rcbd, names, options);
    std::printf("    check: (a) method %s, entry F %.4f on %g and %g DF\n", furrow::fit_method_name(check[0]->method),
                *check[0]->table[1].f, check[0]->table[1].df, check[0]->residual_df);
  }
  std::printf("\n%-44s %12s %14s %10s\n", "", "Furrow ms", "statsmodels ms", "ratio");
  double sa = -1, sb = -1, sc = -1;
  if (!skip_python) {
    const auto dir = std::filesystem::temp_directory_path() / "furrow_bench";
    std::filesystem::create_directories(dir);
    write_csv(breeding, dir / "breeding.csv");
    write_csv(sites, dir / "sites.csv");
    write_csv(refit, dir / "refit.csv");
    const std::string cmd = "/usr/bin/python3 " + std::string(FURROW_SOURCE_DIR) + "/tests/bench/statsmodels_bench.py " +
                            (dir / "breeding.csv").string() + " " + (dir / "sites.csv").string() + " " +
                            std::to_string(kTraits) + " " + (dir / "refit.csv").string();
    std::string out;
    if (FILE* p = popen(cmd.c_str(), "r")) {
      char buf[512];
      while (fgets(buf, sizeof buf, p)) out += buf;
      pclose(p);
    }
    sa = json_number(out, "breeding_s") * 1000;
    sb = json_number(out, "sites_s") * 1000;
    sc = json_number(out, "refit_s") * 1000;
  }
  auto line = [](const char* what, double f, double s, double goal) {
    std::printf("%-44s %12.3f %14s %10s   goal < %g ms: %s\n", what, f, s > 0 ? std::to_string(s).substr(0, 9).c_str() : "-",
                s > 0 ? (std::to_string(s / f).substr(0, 8) + "x").c_str() : "-", goal, f < goal ? "met" : "NOT met");
  };
  line("(a) 500 x 4 RCBD, 3 % missing, 20 traits", a_ms, sa, 20);
  line("(b) 25 x 4 x 6 sites, 20 traits", b_ms, sb, 20);
  line("(c) refit one trait after one new value", c_ms, sc, 2);
  std::printf("(b) with Tukey HSD and letters as well: %.3f ms (one studentized-range quantile, cached)\n", b_hsd_ms);
  if (sa > 0) std::printf("(a) speed-up over statsmodels: %.0fx (goal >= 1000x)\n", sa / a_ms);
  return 0;
}
