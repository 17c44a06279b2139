// A station and its devices for the sync tests and benchmark: a trial of
// 2,000 plots (500 entries x 4 blocks) with 10 traits on 5 occasions, made
// at the station, copied to N devices (each enrolled, keys exchanged), and
// each device's log filled with M rows written straight into its copy in
// one transaction (a fixture: rows as the log format allows, so that the
// tests measure syncing, not typing). Device d records occasion d mod 5 + 1,
// so devices d and d + 5 record the same cells with different values: the
// conflicts a station settles.
//
// usage: sync_fixture DIR DEVICES ROWS
// Writes DIR/station/trial.furrow, DIR/station-before.furrow (the station as
// it was before any sync, for file-based references) and DIR/dev<d>/trial.furrow.

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <string>

#include "storage/backup.h"
#include "storage/bundle.h"
#include "storage/plan_file.h"
#include "storage/trial_store.h"

namespace {
int fail(const std::string& m) {
  std::fprintf(stderr, "sync_fixture: %s\n", m.c_str());
  return 1;
}
}  // namespace

int main(int argc, char** argv) {
  namespace fs = std::filesystem;
  if (argc != 4) return fail("usage: sync_fixture DIR DEVICES ROWS");
  const fs::path dir = argv[1];
  const int devices = std::atoi(argv[2]);
  const long rows = std::atol(argv[3]);
  fs::remove_all(dir);
  fs::create_directories(dir / "station");
  const std::string plan_path = (dir / "nursery.plan.csv").string();
  {
    std::ofstream f(plan_path);
    f << "furrow-plan,1\nsetting,name,Sync fixture nursery\nsetting,design,rcbd\nsetting,replicates,4\n"
         "setting,rows,40\nsetting,columns,50\nsetting,seed,7\nfactor,entry";
    for (int e = 1; e <= 500; ++e) f << ",N" << e;
    f << "\n";
    for (int t = 1; t <= 10; ++t) f << "trait,T" << t << ",trait " << t << ",cm,decimal,1,0,300,40,160,yes,5,\n";
  }
  auto plan = furrow::read_plan_file(plan_path);
  if (!plan) return fail(plan.problem().message);
  auto layout = furrow::randomise(plan->plan);
  if (!layout) return fail(layout.problem().message);
  const std::string station = (dir / "station" / "trial.furrow").string();
  if (auto s = furrow::create_trial_database(station, plan->plan, *layout); !s) return fail(s.problem().message);
  for (int d = 0; d < devices; ++d) {
    fs::create_directories(dir / ("dev" + std::to_string(d)));
    const std::string device = (dir / ("dev" + std::to_string(d)) / "trial.furrow").string();
    if (auto s = furrow::copy_trial_for_device(station, device, furrow::DeviceEnrolment{"Tablet " + std::to_string(d), "Fixture"}); !s)
      return fail(s.problem().message);
    auto open = furrow::open_trial_database(device);
    if (!open) return fail(open.problem().message);
    const furrow::StoredTrial& t = open->trial;
    auto s = furrow::in_transaction(open->db, [&]() -> furrow::Status {
      auto ins = open->db.prepare("INSERT INTO observation VALUES (?,?,?,?,?,?,?,NULL,'',?,?,'')");
      if (!ins) return ins.problem();
      std::int64_t seq = 0;
      // Occasion d mod 5 + 1 first; a longer day goes on to the next occasions.
      for (int j = 0; j < 5 && seq < rows; ++j)
      for (size_t k = 0; k < t.trait_ids.size() && seq < rows; ++k)
        for (size_t p = 0; p < t.plot_ids.size() && seq < rows; ++p) {
          char text[16];
          std::snprintf(text, sizeof text, "%.1f", 80 + static_cast<double>((p * 37 + k * 11 + d * 7) % 600) / 10.0);
          ins->reset();
          ins->bind(1, t.device_id).bind(2, ++seq).bind(3, t.plot_ids[p]).bind(4, t.trait_ids[k]).bind(5, (d + j) % 5 + 1)
              .bind(6, std::string(text)).bind(7, std::strtod(text, nullptr)).bind(8, "crew " + std::to_string(d))
              .bind(9, "2026-06-1" + std::to_string(d % 10) + "T09:00:00.000Z");
          if (auto r = ins->run(); !r) return r;
        }
      return furrow::ok_status();
    });
    if (!s) return fail(s.problem().message);
  }
  // The station as it was before any sync (enrolments made), for references.
  auto before = furrow::backup_trial(station, (dir / "before").string(), 0);
  if (!before) return fail(before.problem().message);
  fs::rename(before->path, dir / "station-before.furrow");
  fs::remove_all(dir / "before");
  std::printf("fixture %s: station and %d devices of %ld rows\n", dir.c_str(), devices, rows);
  return 0;
}
