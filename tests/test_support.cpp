#include "tests/test_support.h"

#include <doctest/doctest.h>

#include <fstream>
#include <map>
#include <sstream>

#include "storage/csv_table.h"
#include "app/work/record_session.h"
#include "storage/plan_file.h"
#include "storage/trial_store.h"

#include <filesystem>

#include <unistd.h>

namespace furrow::test {

std::string reference_path(const std::string& relative) { return std::string(FURROW_REFERENCE_DIR) + "/" + relative; }
std::string generated_path(const std::string& relative) { return std::string(FURROW_GENERATED_DIR) + "/" + relative; }

std::filesystem::path scratch_dir(const std::string& name) {
  return std::filesystem::temp_directory_path() / ("furrow_" + name + "_" + std::to_string(::getpid()));
}

std::string read_text(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  REQUIRE_MESSAGE(in.good(), "cannot open " << path);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

PlotTable load_csv(const std::string& path) {
  const CsvRead r = read_csv_file(path);
  REQUIRE_MESSAGE(r.ok, path << ":" << r.problem.line << ": " << r.problem.message);
  return r.csv.table;
}

PlotTable clewer() { return load_csv(reference_path("field-experiments/clewer-wheat-rcbd.csv")); }

DesignRoles rcbd_roles() {
  DesignRoles r;
  r.kind = DesignKind::randomised_complete_block;
  r.block = "block";
  r.treatments = {"gen"};
  return r;
}

std::string bytes_of(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

std::string fresh_demo_trial(const std::string& name) {
  const auto dir = scratch_dir("tests");
  std::filesystem::create_directories(dir);
  const std::string path = (dir / name).string();
  for (const char* s : {"", "-wal", "-shm"}) std::filesystem::remove(path + s);
  auto plan = read_plan_file(std::string(FURROW_SOURCE_DIR) + "/demo_data/harrow_ridge_oats_2026.plan.csv");
  if (!plan) FAIL(plan.problem().message);
  REQUIRE(plan->layout.has_value());
  REQUIRE(create_trial_database(path, plan->plan, *plan->layout).ok());
  return path;
}

const AnovaRow& row(const Analysis& a, const std::string& source) {
  for (const AnovaRow& r : a.table)
    if (r.source == source) return r;
  FAIL("no row '" << source << "' in the table");
  return a.table.front();
}

// The demo trial with stand count and height entered for every plot from the
// demo day (plot 214 skipped as flooded, plot 307's height 8.3 confirmed).
std::string demo_day_trial(const std::string& name) {
  const auto dir = scratch_dir("demo_day");
  std::filesystem::create_directories(dir);
  const std::string path = (dir / name).string();
  for (const char* s : {"", "-wal", "-shm"}) std::filesystem::remove(path + s);
  const std::string src = FURROW_SOURCE_DIR;
  auto plan = read_plan_file(src + "/demo_data/harrow_ridge_oats_2026.plan.csv");
  REQUIRE(plan.ok());
  REQUIRE(create_trial_database(path, plan->plan, *plan->layout).ok());
  std::ifstream data(src + "/demo_data/harrow_ridge_oats_2026.csv");
  std::string line;
  std::getline(data, line);
  std::map<std::string, std::pair<std::string, std::string>> values;   // plot -> stand, height
  while (std::getline(data, line)) {
    std::stringstream ss(line);
    std::vector<std::string> f;
    for (std::string x; std::getline(ss, x, ',');) f.push_back(x);
    f.resize(11);
    values[f[0]] = {f[5], f[6]};
  }
  auto s = RecordSession::open(path, "Mara");
  REQUIRE(s.ok());
  for (size_t trait : {0u, 1u}) {
    s->set_trait(trait);
    REQUIRE(s->jump_to("101").ok());
    for (int i = 0; i < 80; ++i) {
      const std::string label = s->view().plot_label;
      const std::string v = trait == 0 ? values[label].first : values[label].second;
      if (v.empty()) {
        REQUIRE(s->skip("flooded", "").ok());
        continue;
      }
      const auto out = s->enter(v);
      if (out.kind == EntryOutcome::Kind::needs_confirmation) REQUIRE(s->confirm().kind == EntryOutcome::Kind::saved);
      else REQUIRE(out.kind == EntryOutcome::Kind::saved);
    }
  }
  return path;
}

}  // namespace furrow::test
