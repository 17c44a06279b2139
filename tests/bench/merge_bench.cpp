// Day's-end figures: ten bundles of 20,000 observations each merged into a
// station database, then all ten merged again (nothing may change), and the
// time to write a bundle. The devices' logs are written straight into their
// copies of the trial in one transaction each (a fixture: rows as the log
// format allows), so that the benchmark measures bundles and merging only.
//
// usage: merge_bench [WORK_DIR]

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "storage/bundle.h"
#include "storage/plan_file.h"
#include "storage/trial_store.h"

namespace {

using Clock = std::chrono::steady_clock;
double ms_since(Clock::time_point t) { return std::chrono::duration<double, std::milli>(Clock::now() - t).count(); }

int fail(const std::string& m) {
  std::fprintf(stderr, "%s\n", m.c_str());
  return 1;
}

}  // namespace

int main(int argc, char** argv) {
  namespace fs = std::filesystem;
  const fs::path dir = argc > 1 ? fs::path(argv[1]) : fs::temp_directory_path() / "furrow_merge_bench";
  fs::remove_all(dir);
  fs::create_directories(dir);
  // 2,000 plots (500 entries x 4 blocks) and 10 traits measured on 10
  // occasions: device d records occasion d of every trait on every plot.
  const std::string plan_path = (dir / "nursery.plan.csv").string();
  {
    std::ofstream f(plan_path);
    f << "furrow-plan,1\nsetting,name,merge bench\nsetting,design,rcbd\nsetting,replicates,4\nsetting,rows,40\n"
         "setting,columns,50\nsetting,seed,3\nfactor,entry";
    for (int e = 1; e <= 500; ++e) f << ",G" << e;
    f << "\n";
    for (int t = 1; t <= 10; ++t) f << "trait,T" << t << ",trait " << t << ",cm,decimal,1,0,300,40,160,yes,10,\n";
  }
  auto plan = furrow::read_plan_file(plan_path);
  if (!plan) return fail(plan.problem().message);
  auto layout = furrow::randomise(plan->plan);
  if (!layout) return fail(layout.problem().message);
  const std::string station = (dir / "station.furrow").string();
  if (auto s = furrow::create_trial_database(station, plan->plan, *layout); !s) return fail(s.problem().message);

  std::vector<std::string> bundles;
  double write_ms = 0;
  for (int d = 0; d < 10; ++d) {
    const std::string device = (dir / ("device" + std::to_string(d) + ".furrow")).string();
    if (auto s = furrow::copy_trial_for_device(station, device, furrow::DeviceEnrolment{"", "Bench"}); !s) return fail(s.problem().message);
    auto open = furrow::open_trial_database(device);
    if (!open) return fail(open.problem().message);
    const furrow::StoredTrial& t = open->trial;
    auto s = furrow::in_transaction(open->db, [&]() -> furrow::Status {
      auto ins = open->db.prepare("INSERT INTO observation VALUES (?,?,?,?,?,?,?,NULL,'',?,?,'')");
      if (!ins) return ins.problem();
      std::int64_t seq = 0;
      for (size_t k = 0; k < t.trait_ids.size(); ++k)
        for (size_t p = 0; p < t.plot_ids.size(); ++p) {
          char text[16];
          std::snprintf(text, sizeof text, "%.1f", 80 + static_cast<double>((p * 37 + k * 11 + d) % 600) / 10.0);
          const double v = std::strtod(text, nullptr);   // the number as Furrow parses the text
          ins->reset();
          ins->bind(1, t.device_id).bind(2, ++seq).bind(3, t.plot_ids[p]).bind(4, t.trait_ids[k]).bind(5, d + 1)
              .bind(6, std::string(text)).bind(7, v).bind(8, "crew " + std::to_string(d))
              .bind(9, "2026-06-1" + std::to_string(d % 10) + "T09:00:00.000Z");
          if (auto r = ins->run(); !r) return r;
        }
      return furrow::ok_status();
    });
    if (!s) return fail(s.problem().message);
    const std::string out = (dir / ("device" + std::to_string(d) + ".bundle")).string();
    const auto t0 = Clock::now();
    auto m = furrow::write_bundle(open->db, t, out);
    write_ms += ms_since(t0);
    if (!m) return fail(m.problem().message);
    if (m->observations != 20000) return fail("a bundle should hold 20,000 observations");
    bundles.push_back(out);
  }
  std::printf("10 bundles of 20,000 observations written: %.0f ms in all (%.0f ms each), %.1f MB each\n", write_ms,
              write_ms / 10, static_cast<double>(fs::file_size(bundles[0])) / 1e6);

  auto st = furrow::open_trial_database(station);
  if (!st) return fail(st.problem().message);
  auto t0 = Clock::now();
  std::int64_t added = 0;
  std::string each;   // growth: the station holds 20,000 more rows before each bundle
  for (const auto& b : bundles) {
    const auto t1 = Clock::now();
    auto out = furrow::merge_bundle(st->db, st->trial, b);
    if (!out) return fail(out.problem().message);
    added += out->observations_added;
    each += (each.empty() ? "" : ", ") + std::to_string(static_cast<int>(ms_since(t1)));
  }
  const double first_ms = ms_since(t0);
  auto log_before = furrow::canonical_log(st->db);
  if (!log_before) return fail(log_before.problem().message);
  t0 = Clock::now();
  std::int64_t added_again = 0;
  for (const auto& b : bundles) {
    auto out = furrow::merge_bundle(st->db, st->trial, b);
    if (!out) return fail(out.problem().message);
    added_again += out->observations_added + out->replacements_added;
  }
  const double again_ms = ms_since(t0);
  auto log_after = furrow::canonical_log(st->db);
  if (!log_after) return fail(log_after.problem().message);
  std::printf("merge 10 bundles (200,000 observations) into the station: %.0f ms, %lld rows added (goal: under 2,000 ms)\n",
              first_ms, static_cast<long long>(added));
  std::printf("  each bundle in turn, the station holding 0 to 180,000 rows before it (signature, checks, insert): %s ms\n",
              each.c_str());
  std::printf("merge all 10 again: %.0f ms, %lld rows added, log %s (goal: under 500 ms, nothing changes)\n", again_ms,
              static_cast<long long>(added_again), *log_before == *log_after ? "unchanged" : "CHANGED");
  return added == 200000 && added_again == 0 && *log_before == *log_after ? 0 : 1;
}
