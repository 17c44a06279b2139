#include "tests/test_support.h"

#include <doctest/doctest.h>

#include <fstream>
#include <sstream>

#include "storage/csv_table.h"
#include "storage/plan_file.h"

#include <filesystem>

namespace furrow::test {

std::string reference_path(const std::string& relative) { return std::string(FURROW_REFERENCE_DIR) + "/" + relative; }
std::string generated_path(const std::string& relative) { return std::string(FURROW_GENERATED_DIR) + "/" + relative; }

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

std::string fresh_demo_trial(const std::string& name) {
  const auto dir = std::filesystem::temp_directory_path() / "furrow_tests";
  std::filesystem::create_directories(dir);
  const std::string path = (dir / name).string();
  for (const char* s : {"", "-wal", "-shm"}) std::filesystem::remove(path + s);
  auto plan = read_plan_file(std::string(FURROW_SOURCE_DIR) + "/demo_data/harrow_ridge_oats_2026.plan.csv");
  REQUIRE_MESSAGE(plan.ok(), plan.problem().message);
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

}  // namespace furrow::test
