#include "app/work/trial_summary.h"

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <set>
#include <tuple>

#include "core/design.h"
#include "storage/plan_file.h"

namespace furrow {

namespace fs = std::filesystem;

TrialProgress trial_progress(const StoredTrial& t, const std::vector<LiveObservation>& live) {
  TrialProgress p;
  p.last_change = t.created_at;
  std::set<std::tuple<std::int64_t, std::int64_t, int>> done;
  for (const auto& x : live) {
    if (x.value || (x.missing_reason && *x.missing_reason != kWithdrawnReason)) done.insert({x.plot_id, x.trait_id, x.occasion});
    p.last_change = std::max(p.last_change, x.recorded_at);
  }
  std::set<std::int64_t> required;
  for (size_t k = 0; k < t.plan.traits.size(); ++k) {
    if (!t.plan.traits[k].required) continue;
    required.insert(t.trait_ids[k]);
    p.cells_required += static_cast<int>(t.layout.plots.size()) * t.plan.traits[k].occasions;
  }
  for (const auto& d : done)
    if (required.count(std::get<1>(d))) ++p.cells_done;
  return p;
}

TrialSummary summarise_trial(const std::string& path) {
  TrialSummary s;
  s.path = path;
  s.file_name = fs::path(path).filename().string();
  auto open = open_trial_database(path);
  if (!open) {
    s.problem = open.problem().message;
    return s;
  }
  // Every row of the log, not only live ones, gives the time of the last change.
  auto all = all_observations(open->db);
  auto live = live_observations(open->db, 0);
  if (!all || !live) {
    s.problem = (!all ? all.problem() : live.problem()).message;
    return s;
  }
  const StoredTrial& t = open->trial;
  s.name = t.plan.name;
  s.design = design_kind_title(t.plan.design);
  s.site = t.plan.site;
  s.season = t.plan.season;
  s.uid = t.uid;
  s.plots = static_cast<int>(t.layout.plots.size());
  s.traits = static_cast<int>(t.plan.traits.size());
  s.progress = trial_progress(t, *live);
  for (const auto& x : *all) s.progress.last_change = std::max(s.progress.last_change, x.recorded_at);
  return s;
}

std::vector<std::string> list_trial_files(const std::string& folder) {
  std::vector<std::string> out;
  std::error_code ec;
  for (const auto& entry : fs::directory_iterator(folder, ec))
    if (entry.is_regular_file(ec) && entry.path().extension() == ".furrow") out.push_back(entry.path().string());
  std::sort(out.begin(), out.end());
  return out;
}

namespace {
constexpr const char* kKnownTrialsFile = "known_trials.txt";

fs::path normal(const std::string& p) { return fs::absolute(p).lexically_normal(); }

bool inside(const std::string& folder, const std::string& path) {
  fs::path f = normal(folder);
  if (!f.has_filename()) f = f.parent_path();   // "folder/" names the folder too
  return normal(path).parent_path() == f;
}
}  // namespace

std::vector<std::string> known_trials(const std::string& folder) {
  std::vector<std::string> out;
  std::ifstream in(fs::path(folder) / kKnownTrialsFile);
  for (std::string line; std::getline(in, line);)
    if (!line.empty()) out.push_back(line);
  return out;
}

namespace {
Status write_known(const std::string& folder, const std::vector<std::string>& paths) {
  const fs::path file = fs::path(folder) / kKnownTrialsFile, tmp = file.string() + ".tmp";
  {
    std::ofstream out(tmp, std::ios::trunc);
    for (const auto& p : paths) out << p << "\n";
    out.flush();
    if (!out) return make_problem(tmp.string() + ": cannot write the list of trials");
  }
  std::error_code ec;
  fs::rename(tmp, file, ec);
  if (ec) return make_problem(file.string() + ": " + ec.message());
  return ok_status();
}
}  // namespace

Status remember_trial(const std::string& folder, const std::string& path) {
  if (folder.empty() || inside(folder, path)) return ok_status();
  const std::string absolute = normal(path).string();
  auto paths = known_trials(folder);
  if (std::find(paths.begin(), paths.end(), absolute) != paths.end()) return ok_status();
  paths.push_back(absolute);
  return write_known(folder, paths);
}

Result<std::string> remove_trial(const std::string& folder, const std::string& path) {
  std::error_code ec;
  if (!inside(folder, path)) {
    auto paths = known_trials(folder);
    std::erase(paths, normal(path).string());
    if (auto s = write_known(folder, paths); !s) return s.problem();
    return path;
  }
  const fs::path trash = fs::path(folder) / "trash";
  fs::create_directories(trash, ec);
  if (ec) return make_problem(trash.string() + ": " + ec.message());
  std::string stamp = utc_now().substr(0, 19);
  std::replace(stamp.begin(), stamp.end(), 'T', ' ');
  std::replace(stamp.begin(), stamp.end(), ':', '-');
  const fs::path target = trash / (fs::path(path).stem().string() + " (removed " + stamp + ").furrow");
  if (fs::exists(target)) return make_problem(target.string() + " already exists; try again in a second");
  // The log's sidecar files first, so that the database never stands without them.
  for (const char* suffix : {"-wal", "-shm"})
    if (fs::exists(path + suffix)) {
      fs::rename(path + suffix, target.string() + suffix, ec);
      if (ec) return make_problem(path + suffix + ": " + ec.message());
    }
  fs::rename(path, target, ec);
  if (ec) return make_problem(path + ": " + ec.message());
  return target.string();
}

std::vector<TrialSummary> trials_named_like_plan(const std::vector<TrialSummary>& trials, const std::string& plan_path) {
  std::vector<TrialSummary> out;
  auto plan = read_plan_file(plan_path);
  if (!plan) return out;
  for (const TrialSummary& t : trials)
    if (t.problem.empty() && t.name == plan->plan.name) out.push_back(t);
  return out;
}

std::vector<TrialSummary> list_trials(const std::string& folder) {
  std::vector<TrialSummary> out;
  for (const std::string& path : list_trial_files(folder)) out.push_back(summarise_trial(path));
  for (const std::string& path : known_trials(folder))
    if (fs::exists(path)) out.push_back(summarise_trial(path));
  std::sort(out.begin(), out.end(), [](const TrialSummary& a, const TrialSummary& b) {
    return std::tie(b.progress.last_change, a.file_name) < std::tie(a.progress.last_change, b.file_name);
  });
  return out;
}

std::vector<std::string> list_plan_files(const std::string& folder) {
  std::vector<std::string> out;
  std::error_code ec;
  for (const auto& entry : fs::directory_iterator(folder, ec)) {
    if (!entry.is_regular_file(ec) || entry.path().extension() != ".csv") continue;
    std::ifstream in(entry.path());
    std::string first;
    std::getline(in, first);
    if (first.rfind("furrow-plan", 0) == 0) out.push_back(entry.path().string());
  }
  std::sort(out.begin(), out.end());
  return out;
}

Result<std::string> create_trial_from_plan(const std::string& plan_path, const std::string& db_path) {
  auto plan = read_plan_file(plan_path);
  if (!plan) {
    const Problem& p = plan.problem();
    std::string where = plan_path;
    if (p.record > 0) where += ":" + std::to_string(p.record);
    where += ": ";
    if (!p.column.empty()) where += "field '" + p.column + "': ";
    return make_problem(where + p.message);
  }
  Layout layout;
  if (plan->layout) {
    layout = *plan->layout;
    if (static_cast<int>(layout.plots.size()) != plan->plan.rows * plan->plan.columns)
      return make_problem(plan_path + ": the plan lists " + std::to_string(layout.plots.size()) +
                          " plots but its grid has " + std::to_string(plan->plan.rows * plan->plan.columns));
  } else {
    auto r = randomise(plan->plan);
    if (!r) return make_problem(plan_path + ": the design cannot be randomised: " + r.problem().message);
    layout = std::move(r).value();
  }
  if (auto s = create_trial_database(db_path, plan->plan, layout); !s)
    return make_problem(db_path + ": " + s.problem().message);
  return plan->plan.name + ", " + design_kind_title(plan->plan.design) + ", " + std::to_string(layout.plots.size()) +
         " plots, " + std::to_string(plan->plan.traits.size()) + " traits" +
         (plan->layout ? " (layout from the plan file)" : ", randomised with seed " + std::to_string(plan->plan.seed));
}

std::string trial_path_for_plan(const std::string& plan_path, const std::string& folder) {
  std::string stem = fs::path(plan_path).filename().string();
  for (const char* suffix : {".plan.csv", ".csv", ".furrow"})
    if (stem.size() > std::string(suffix).size() && stem.ends_with(suffix)) {
      stem.resize(stem.size() - std::string(suffix).size());
      break;
    }
  std::string path = (fs::path(folder) / (stem + ".furrow")).string();
  for (int k = 2; fs::exists(path); ++k) path = (fs::path(folder) / (stem + " (" + std::to_string(k) + ").furrow")).string();
  return path;
}

}  // namespace furrow
