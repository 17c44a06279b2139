// store_bench: figures for the trial database.
//   1. Saving one entry (entry checks + durable commit through the
//      observation log) against a bare SQLite INSERT + COMMIT with the same
//      pragmas (WAL, synchronous=FULL), in the same run: p50, p99, ratio
//      (goal: within 1.3x).
//   2. Importing a 5,000-plot plan: reading the plan file, randomising it and
//      writing the trial database.
//
// usage: store_bench [--entries N]

#define SQLITE_ENABLE_SESSION
#include <sqlite3.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "core/entry_checks.h"
#include "storage/plan_file.h"
#include "storage/trial_store.h"

namespace {

using Clock = std::chrono::steady_clock;
double ms_since(Clock::time_point t0) { return std::chrono::duration<double, std::milli>(Clock::now() - t0).count(); }

double percentile(std::vector<double> v, double q) {
  std::sort(v.begin(), v.end());
  return v[static_cast<size_t>(q * static_cast<double>(v.size() - 1))];
}

void remove_db(const std::string& p) {
  for (const char* s : {"", "-wal", "-shm"}) std::filesystem::remove(p + s);
}

}  // namespace

int main(int argc, char** argv) {
  int entries = 2000;
  for (int i = 1; i + 1 < argc; ++i)
    if (std::string(argv[i]) == "--entries") entries = std::atoi(argv[i + 1]);
  const auto dir = std::filesystem::temp_directory_path() / "furrow_store_bench";
  std::filesystem::create_directories(dir);

  // A 5,000-plot plan: 1,250 entries x 4 blocks on a 40 x 125 grid.
  const std::string plan_path = (dir / "big.plan.csv").string();
  {
    std::ofstream f(plan_path);
    f << "furrow-plan,1\nsetting,name,bench\nsetting,design,rcbd\nsetting,replicates,4\nsetting,rows,40\n"
         "setting,columns,125\nsetting,seed,7\nfactor,entry";
    for (int e = 1; e <= 1250; ++e) f << ",G" << e;
    f << "\ntrait,HT,plant height,cm,decimal,1,0,300,40,160,yes,1,\n";
  }
  const std::string big_db = (dir / "big.furrow").string();
  remove_db(big_db);
  auto t0 = Clock::now();
  auto plan = furrow::read_plan_file(plan_path);
  const double read_ms = ms_since(t0);
  t0 = Clock::now();
  auto layout = furrow::randomise(plan->plan);
  const double randomise_ms = ms_since(t0);
  t0 = Clock::now();
  auto created = furrow::create_trial_database(big_db, plan->plan, *layout);
  const double write_ms = ms_since(t0);
  if (!created) { std::fprintf(stderr, "%s\n", created.problem().message.c_str()); return 1; }
  std::printf("import of a 5,000-plot plan: read %.1f ms, randomise %.1f ms, write database %.1f ms, total %.1f ms\n",
              read_ms, randomise_ms, write_ms, read_ms + randomise_ms + write_ms);

  // The same plan with its 5,000 plots listed (a ready layout to import).
  const std::string listed_path = (dir / "big_listed.plan.csv").string();
  {
    std::ifstream in(plan_path);
    std::ofstream f(listed_path);
    f << in.rdbuf();
    for (const auto& plot : layout->plots)
      f << "plot," << plot.label << "," << plot.block << "," << plot.row << "," << plot.column << ","
        << plan->plan.factors[0].levels[plot.levels[0]] << "\n";
  }
  const std::string listed_db = (dir / "big_listed.furrow").string();
  remove_db(listed_db);
  t0 = Clock::now();
  auto listed = furrow::read_plan_file(listed_path);
  const double listed_read_ms = ms_since(t0);
  if (!listed || !listed->layout) { std::fprintf(stderr, "listed plan failed\n"); return 1; }
  t0 = Clock::now();
  if (!furrow::create_trial_database(listed_db, listed->plan, *listed->layout)) return 1;
  const double listed_write_ms = ms_since(t0);
  std::printf("import of a 5,000-plot plan with its plots listed: read and check %.1f ms, write database %.1f ms, "
              "total %.1f ms\n", listed_read_ms, listed_write_ms, listed_read_ms + listed_write_ms);

  // Saving entries through checks and the log.
  auto open = furrow::open_trial_database(big_db);
  auto& [db, trial] = *open;
  const furrow::Trait& trait = trial.plan.traits[0];
  // Bare SQLite: the same pragmas, one INSERT + COMMIT per row, interleaved
  // with Furrow's entries so that both see the same disk and cache state.
  const std::string bare_db = (dir / "bare.sqlite").string();
  remove_db(bare_db);
  sqlite3* raw = nullptr;
  sqlite3_open(bare_db.c_str(), &raw);
  sqlite3_exec(raw, "PRAGMA journal_mode=WAL; PRAGMA synchronous=FULL; PRAGMA foreign_keys=ON;"
                    "CREATE TABLE t (device TEXT NOT NULL, seq INTEGER NOT NULL, plot INTEGER NOT NULL, "
                    "value TEXT, PRIMARY KEY (device, seq)) STRICT;", nullptr, nullptr, nullptr);
  sqlite3_stmt* ins = nullptr;
  sqlite3_prepare_v2(raw, "INSERT INTO t VALUES ('d', ?, ?, ?)", -1, &ins, nullptr);
  furrow::EntryContext ctx;
  furrow::ObservationWriter writer(db);
  std::vector<double> furrow_ms, bare_ms, check_ms;
  for (int i = 0; i < entries; ++i) {
    const std::string value = std::to_string(80 + i % 40) + ".5";
    t0 = Clock::now();
    const auto findings = furrow::check_entry(trait, value, ctx);
    if (furrow::worst(findings) == furrow::Severity::refuse) return 1;
    const auto parsed = furrow::parse_trait_value(trait, value);
    furrow::NewObservation o;
    o.plot_id = trial.plot_ids[static_cast<size_t>(i) % trial.plot_ids.size()];
    o.trait_id = trial.trait_ids[0];
    o.value = parsed->text;
    o.number = parsed->number;
    o.observer = "bench";
    const auto t1 = Clock::now();
    if (!writer.append(trial.device_id, o, furrow::utc_now())) return 1;
    furrow_ms.push_back(ms_since(t0));
    check_ms.push_back(std::chrono::duration<double, std::milli>(t1 - t0).count());
    ctx.other_values.push_back(*parsed->number);
    ctx.previous_entries.push_back(parsed->text);
    t0 = Clock::now();
    sqlite3_exec(raw, "BEGIN IMMEDIATE", nullptr, nullptr, nullptr);
    sqlite3_bind_int64(ins, 1, i);
    sqlite3_bind_int64(ins, 2, i % 5000);
    sqlite3_bind_text(ins, 3, "95.5", -1, SQLITE_STATIC);
    sqlite3_step(ins);
    sqlite3_reset(ins);
    sqlite3_exec(raw, "COMMIT", nullptr, nullptr, nullptr);
    bare_ms.push_back(ms_since(t0));
  }

  sqlite3_finalize(ins);
  sqlite3_close(raw);
  const double f50 = percentile(furrow_ms, 0.5), f99 = percentile(furrow_ms, 0.99);
  const double b50 = percentile(bare_ms, 0.5), b99 = percentile(bare_ms, 0.99);
  std::printf("saving one entry (%d entries)     p50 %.3f ms   p99 %.3f ms\n", entries, f50, f99);
  std::printf("  of which entry checks            p50 %.3f ms   p99 %.3f ms\n", percentile(check_ms, 0.5),
              percentile(check_ms, 0.99));
  std::printf("bare SQLite insert + commit       p50 %.3f ms   p99 %.3f ms\n", b50, b99);
  std::printf("ratio                             p50 %.2fx     p99 %.2fx   (goal: within 1.3x)\n", f50 / b50, f99 / b99);
  return 0;
}
