// Programme-scale analysis: one trait's full analysis (table, means with
// SEs, LSD, HSD, outliers, missing cells) as the design grows, each case in
// a child process so that its peak memory is its own. Several sites (random,
// 3 blocks, 6 and 12 sites, 50 to 800 entries) and factorials (a x a in 2
// blocks, 10 to 80 levels), 3 % of plots missing; then 20 traits of the
// 12-site, 400-entry trial, each with its own missing plots. With
// --statsmodels, the same analysis by Debian's statsmodels on the sizes it
// finishes within 60 s, timed in the same run (tests/bench/scale_statsmodels.py).
//
// usage: scale_bench [--statsmodels] [--work DIR]

#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "core/analysis.h"
#include "core/random_stream.h"

namespace {

using Clock = std::chrono::steady_clock;

struct Case {
  std::string series;   // "several sites, 12 sites" or "factorial a x a, 2 blocks"
  int sites = 0, entries = 0, levels = 0;
  int traits = 1;
};

double noisy(furrow::RandomStream& rng, double effect) {
  double z = 0;
  for (int k = 0; k < 12; ++k) z += static_cast<double>(rng.below(1000000)) / 1e6;
  return 50 + effect + 4 * (z - 6);
}

std::string num(double v) {
  char b[32];
  std::snprintf(b, sizeof b, "%.2f", v);
  return b;
}

// The table and the roles of a case; 3 % of each trait's plots missing.
furrow::PlotTable make_table(const Case& c, furrow::DesignRoles* roles, std::vector<std::string>* traits) {
  furrow::RandomStream rng(20261202 + c.sites * 1000 + c.entries + c.levels);
  furrow::PlotTable t;
  const bool sites = c.sites > 0;
  for (const char* name : sites ? std::vector<const char*>{"site", "block", "entry"}
                                : std::vector<const char*>{"block", "rate", "variety"})
    t.columns.push_back({name, {}});
  for (int k = 0; k < c.traits; ++k) {
    traits->push_back(k == 0 ? "y" : "y" + std::to_string(k + 1));
    t.columns.push_back({traits->back(), {}});
  }
  const int outer = sites ? c.sites : 2, middle = sites ? 3 : c.levels, inner = sites ? c.entries : c.levels;
  for (int a = 0; a < outer; ++a)
    for (int b = 0; b < middle; ++b)
      for (int e = 0; e < inner; ++e) {
        if (sites) {
          t.columns[0].cells.push_back("S" + std::to_string(a));
          t.columns[1].cells.push_back("B" + std::to_string(b));
          t.columns[2].cells.push_back("E" + std::to_string(e));
        } else {
          t.columns[0].cells.push_back("K" + std::to_string(a));
          t.columns[1].cells.push_back("R" + std::to_string(b));
          t.columns[2].cells.push_back("V" + std::to_string(e));
        }
        for (int k = 0; k < c.traits; ++k) {
          const bool gone = rng.below(100) < 3;
          const double effect = sites ? a * 2.0 + b * 0.5 + (e % 7) * 0.8 + ((a * e) % 5) * 0.3
                                      : a + b * 0.1 + (e % 9) * 0.4 + ((b + 2 * e) % 4) * 0.5;
          t.columns[3 + k].cells.push_back(gone ? "" : num(noisy(rng, effect + k)));
        }
      }
  if (sites) {
    roles->kind = furrow::DesignKind::multi_site;
    roles->site = "site";
    roles->block = "block";
    roles->treatments = {"entry"};
    roles->sites_random = true;
  } else {
    roles->kind = furrow::DesignKind::factorial;
    roles->block = "block";
    roles->treatments = {"rate", "variety"};
  }
  return t;
}

struct Measured {
  double ms = 0;
  long peak_kb = 0;
  int plots = 0;
  char method[16] = {};
  bool ok = false;
};

// Runs the case in a child: generation, then the timed analysis.
Measured measure(const Case& c) {
  int fd[2];
  if (pipe(fd) != 0) return {};
  const pid_t pid = fork();
  if (pid == 0) {
    close(fd[0]);
    furrow::DesignRoles roles;
    std::vector<std::string> traits;
    const furrow::PlotTable table = make_table(c, &roles, &traits);
    Measured m;
    m.plots = table.records();
    const auto t0 = Clock::now();
    const auto results = furrow::analyse_all(table, roles, traits);
    m.ms = std::chrono::duration<double, std::milli>(Clock::now() - t0).count();
    m.ok = true;
    for (const auto& r : results) {
      if (!r.ok()) {
        std::fprintf(stderr, "%s: %s\n", c.series.c_str(), r.problem().message.c_str());
        m.ok = false;
      }
    }
    if (m.ok) std::snprintf(m.method, sizeof m.method, "%s", furrow::fit_method_name(results.front()->method));
    rusage u{};
    getrusage(RUSAGE_SELF, &u);
    m.peak_kb = u.ru_maxrss;
    if (write(fd[1], &m, sizeof m) != sizeof m) _exit(1);
    _exit(0);
  }
  close(fd[1]);
  Measured m;
  if (read(fd[0], &m, sizeof m) != sizeof m) m.ok = false;
  close(fd[0]);
  int status = 0;
  waitpid(pid, &status, 0);
  return m;
}

// statsmodels on the same table (written as CSV), within 60 s; -1 when it did not finish.
double statsmodels_seconds(const Case& c, const std::filesystem::path& work) {
  furrow::DesignRoles roles;
  std::vector<std::string> traits;
  const furrow::PlotTable t = make_table(c, &roles, &traits);
  const std::string csv = (work / "case.csv").string();
  {
    std::ofstream f(csv);
    f << (c.sites ? "site,block,entry,y\n" : "block,rate,variety,y\n");
    for (int r = 0; r < t.records(); ++r)
      f << t.columns[0].cells[r] << "," << t.columns[1].cells[r] << "," << t.columns[2].cells[r] << ","
        << t.columns[3].cells[r] << "\n";
  }
  const std::string cmd = "timeout 60 /usr/bin/python3 " + std::string(FURROW_SOURCE_DIR) +
                          "/tests/bench/scale_statsmodels.py " + csv + " " +
                          (c.sites ? "several-sites" : "factorial") + " 2>/dev/null";
  FILE* p = popen(cmd.c_str(), "r");
  if (!p) return -1;
  char buf[64] = {};
  const bool got = std::fgets(buf, sizeof buf, p) != nullptr;
  const int status = pclose(p);
  if (!got || status != 0) return -1;
  return std::atof(buf);
}

}  // namespace

int main(int argc, char** argv) {
  bool with_statsmodels = false;
  std::filesystem::path work = std::filesystem::temp_directory_path() / "furrow_scale_bench";
  for (int i = 1; i < argc; ++i) {
    if (std::strcmp(argv[i], "--statsmodels") == 0) with_statsmodels = true;
    else if (std::strcmp(argv[i], "--work") == 0 && i + 1 < argc) work = argv[++i];
  }
  std::filesystem::create_directories(work);
  std::vector<Case> cases;
  for (int sites : {6, 12})
    for (int entries : {50, 100, 200, 400, 800})
      cases.push_back({"several sites (" + std::to_string(sites) + " sites x 3 blocks), random", sites, entries, 0});
  for (int levels : {10, 20, 40, 50, 80}) cases.push_back({"factorial a x a in 2 blocks", 0, 0, levels});

  std::printf("scale_bench: one trait's full analysis (table, means and SEs, LSD, HSD, outliers, missing cells),\n"
              "3 %% of plots missing, each case in its own process (peak memory is the whole process's)\n\n");
  std::printf("%-44s %8s %7s %10s %9s %8s %14s %8s\n", "design", "plots", "method", "Furrow ms", "peak MB",
              "x2 time", "statsmodels s", "ratio");
  double previous_ms = 0;
  std::string previous_series;
  bool statsmodels_gave_up = false;
  for (const Case& c : cases) {
    if (c.series != previous_series) {
      previous_ms = 0;
      statsmodels_gave_up = false;
    }
    const Measured m = measure(c);
    const std::string what = c.sites ? "several sites: " + std::to_string(c.sites) + " x 3 blocks x " +
                                           std::to_string(c.entries) + " entries"
                                     : "factorial " + std::to_string(c.levels) + " x " + std::to_string(c.levels) +
                                           " in 2 blocks";
    char growth[16] = "-";
    if (previous_ms > 0 && m.ok) std::snprintf(growth, sizeof growth, "%.1fx", m.ms / previous_ms);
    double sm = -1;
    if (with_statsmodels && !statsmodels_gave_up) {
      sm = statsmodels_seconds(c, work);
      statsmodels_gave_up = sm < 0;
    }
    char sm_text[24] = "-", ratio[24] = "-";
    if (with_statsmodels) {
      if (sm >= 0) {
        std::snprintf(sm_text, sizeof sm_text, "%.2f", sm);
        std::snprintf(ratio, sizeof ratio, "%.0fx", sm * 1000 / m.ms);
      } else {
        std::snprintf(sm_text, sizeof sm_text, "> 60");
      }
    }
    std::printf("%-44s %8d %7s %10.1f %9.1f %8s %14s %8s\n", what.c_str(), m.plots, m.ok ? m.method : "FAILED", m.ms,
                static_cast<double>(m.peak_kb) / 1024, growth, sm_text, ratio);
    std::fflush(stdout);
    previous_ms = m.ok ? m.ms : 0;
    previous_series = c.series;
  }
  // The goals.
  Case one{"several sites", 12, 400, 0, 1};
  Case twenty{"several sites", 12, 400, 0, 20};
  const Measured a = measure(one), b = measure(twenty);
  Case fac{"factorial", 0, 0, 50, 1};
  const Measured f = measure(fac);
  std::printf("\ngoals (this machine):\n");
  std::printf("  12 sites x 3 blocks x 400 entries (%d plots), one trait: %.1f ms (goal < 200 ms: %s), peak %.1f MB "
              "(goal < 150 MB: %s)\n",
              a.plots, a.ms, a.ms < 200 ? "met" : "NOT met", a.peak_kb / 1024.0, a.peak_kb < 150 * 1024 ? "met" : "NOT met");
  std::printf("  the same, 20 traits each with its own missing plots: %.1f ms (goal < 2,000 ms: %s), peak %.1f MB\n",
              b.ms, b.ms < 2000 ? "met" : "NOT met", b.peak_kb / 1024.0);
  std::printf("  factorial 50 x 50 in 2 blocks (%d plots): %.1f ms (goal < 100 ms: %s)\n", f.plots, f.ms,
              f.ms < 100 ? "met" : "NOT met");
  return a.ok && b.ok && f.ok ? 0 : 1;
}
