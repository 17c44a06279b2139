// What the Trials screen lists: progress, last change, plan files, and a
// trial made from a plan file (or a clear refusal that creates nothing).

#include "app/work/trial_summary.h"

#include <doctest/doctest.h>

#include <filesystem>
#include <fstream>

#include "tests/test_support.h"

namespace furrow {
namespace {

namespace fs = std::filesystem;

fs::path empty_folder(const std::string& name) {
  const fs::path dir = test::scratch_dir(name);
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

const std::string kPlan = std::string(FURROW_SOURCE_DIR) + "/demo_data/harrow_ridge_oats_2026.plan.csv";

TEST_CASE("progress of the demo day: stand count and height, less the flooded plot's reason, out of every required cell") {
  const std::string path = test::demo_day_trial("summary_test.furrow");
  const TrialSummary s = summarise_trial(path);
  REQUIRE(s.problem.empty());
  CHECK(s.name == "Harrow Ridge hulless oat variety trial 2026");
  CHECK(s.design == "randomised complete block");
  CHECK(s.plots == 80);
  CHECK(s.traits == 5);
  // 5 required traits x 80 plots; stand count and height have all 80 cells
  // (plot 214 with the reason "flooded").
  CHECK(s.progress.cells_required == 400);
  CHECK(s.progress.cells_done == 160);
  CHECK(s.progress.percent() == doctest::Approx(40.0));
  CHECK(s.progress.last_change.size() >= 19);
  CHECK(s.progress.last_change.substr(0, 2) == "20");
}

TEST_CASE("the folder lists its trial databases (newest change first) and plan files; unreadable ones say why") {
  const fs::path dir = empty_folder("furrow_trials_list");
  auto made = create_trial_from_plan(kPlan, (dir / "oats.furrow").string());
  REQUIRE(made.ok());
  CHECK(made->find("80 plots") != std::string::npos);
  fs::copy_file(kPlan, dir / "oats.plan.csv");
  std::ofstream(dir / "notes.csv") << "plot,height\n101,9\n";   // a CSV that is not a plan
  std::ofstream(dir / "broken.furrow") << "not a database";
  const auto trials = list_trials(dir.string());
  REQUIRE(trials.size() == 2);
  int readable = 0;
  for (const TrialSummary& s : trials) {
    if (s.file_name == "broken.furrow") CHECK_FALSE(s.problem.empty());
    else {
      CHECK(s.problem.empty());
      CHECK(s.progress.cells_done == 0);
      ++readable;
    }
  }
  CHECK(readable == 1);
  const auto plans = list_plan_files(dir.string());
  REQUIRE(plans.size() == 1);
  CHECK(fs::path(plans[0]).filename() == "oats.plan.csv");
}

TEST_CASE("a new trial's file name comes from the plan's and never replaces a trial") {
  const fs::path dir = empty_folder("furrow_trials_names");
  CHECK(fs::path(trial_path_for_plan("/x/oats.plan.csv", dir.string())).filename() == "oats.furrow");
  std::ofstream(dir / "oats.furrow") << "";
  CHECK(fs::path(trial_path_for_plan("/x/oats.plan.csv", dir.string())).filename() == "oats (2).furrow");
  CHECK(fs::path(trial_path_for_plan("/x/barley.csv", dir.string())).filename() == "barley.furrow");
  CHECK(fs::path(trial_path_for_plan("/usb/oats.furrow", dir.string())).filename() == "oats (2).furrow");
}

TEST_CASE("a bad plan file is refused naming file, line and field, and creates nothing") {
  const fs::path dir = empty_folder("furrow_trials_bad");
  const fs::path plan = dir / "bad.plan.csv";
  std::ifstream in(kPlan);
  std::ofstream out(plan);
  int line = 0;
  for (std::string s; std::getline(in, s);) {
    ++line;
    if (s.rfind("setting,replicates", 0) == 0) s = "setting,replicates,four";
    out << s << "\n";
  }
  out.close();
  const std::string db = (dir / "bad.furrow").string();
  const auto made = create_trial_from_plan(plan.string(), db);
  REQUIRE_FALSE(made.ok());
  CAPTURE(made.problem().message);
  CHECK(made.problem().message.find(plan.string() + ":") == 0);
  CHECK(made.problem().message.find("replicates") != std::string::npos);
  CHECK_FALSE(fs::exists(db));
}

}  // namespace
}  // namespace furrow
