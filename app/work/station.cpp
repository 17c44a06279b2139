#include "app/work/station.h"
#include "app/work/glossary.h"

#include <algorithm>
#include <filesystem>

#include "app/work/report.h"
#include "app/work/trial_summary.h"
#include "storage/bundle.h"
#include "storage/plan_file.h"
#include "storage/text_file.h"
#include "storage/trial_store.h"

namespace furrow {

namespace fs = std::filesystem;

std::vector<std::string> list_bundle_files(const std::string& folder) {
  std::vector<std::string> out;
  std::error_code ec;
  for (const auto& e : fs::directory_iterator(folder, ec))
    if (e.is_regular_file(ec) && e.path().extension() == ".bundle") out.push_back(e.path().string());
  std::sort(out.begin(), out.end());
  return out;
}

BundleFolders bundle_folders(const std::string& data_folder) {
  const fs::path b = fs::path(data_folder) / "bundles";
  return {(b / "incoming").string(), (b / "done").string(), (b / "refused").string(), (b / "outgoing").string()};
}

void StationImport::file_away(const std::string& path, bool merged, BundleOutcome* o) {
  if (!folders_) return;
  const fs::path dir = merged ? folders_->done : folders_->refused;
  std::error_code ec;
  fs::create_directories(dir, ec);
  fs::path target = dir / fs::path(path).filename();
  for (int k = 2; fs::exists(target); ++k)
    target = dir / (fs::path(path).stem().string() + " (" + std::to_string(k) + ")" + fs::path(path).extension().string());
  fs::rename(path, target, ec);
  if (ec) o->message += " (could not move it to " + dir.string() + ": " + ec.message() + ")";
}

StationImport::StationImport(const std::string& bundle_folder, const std::string& trial_folder,
                             const std::vector<std::string>& also, const BundleFolders* folders)
    : files_(list_bundle_files(bundle_folder)) {
  if (folders) folders_ = *folders;
  // Only each trial's identity is needed: open the files, read no log.
  std::vector<std::string> paths = list_trial_files(trial_folder);
  paths.insert(paths.end(), also.begin(), also.end());
  for (const std::string& path : paths) {
    if (std::any_of(trials_.begin(), trials_.end(), [&](const auto& t) {
          std::error_code ec;
          return fs::equivalent(t.second, path, ec);
        }))
      continue;
    if (auto open = open_trial_database(path)) trials_.push_back({open->trial.uid, path});
  }
}

const std::string& StationImport::current_file() const {
  static const std::string none;
  return done() ? none : files_[next_];
}

void StationImport::step() {
  if (done()) return;
  const std::string path = files_[next_++];
  BundleOutcome o;
  o.file = fs::path(path).filename().string();
  auto manifest = read_bundle_manifest(path);
  if (!manifest) {
    o.message = manifest.problem().message;
    o.refused = true;
    file_away(path, false, &o);
    outcomes_.push_back(o);
    return;
  }
  o.trial_name = manifest->trial_name;
  const auto it = std::find_if(trials_.begin(), trials_.end(), [&](const auto& t) { return t.first == manifest->trial_uid; });
  if (it == trials_.end()) {
    o.message = "no trial '" + manifest->trial_name + "' on this device to merge it into";
    outcomes_.push_back(o);
    return;
  }
  auto open = open_trial_database(it->second);
  if (!open) {
    o.message = open.problem().message;
    outcomes_.push_back(o);
    return;
  }
  auto merged = merge_bundle(open->db, open->trial, path);
  if (!merged && waits_for_earlier_bundle(merged.problem())) {
    o.message = merged.problem().message;   // stays in incoming; read again after the others
    if (!retried_.count(path)) {
      retried_.insert(path);
      files_.push_back(path);
    }
  } else if (!merged) {
    o.message = merged.problem().message;
    o.refused = true;
    file_away(path, false, &o);
  } else {
    o.merged = true;
    o.observations_added = merged->observations_added;
    o.message = merged->observations_added || merged->replacements_added
                    ? count_of(merged->observations_added, "new observation")
                    : "nothing new (merged before)";
    file_away(path, true, &o);
  }
  outcomes_.push_back(o);
}

Result<std::string> write_device_bundle(const std::string& db_path, const std::string& folder) {
  auto open = open_trial_database(db_path);
  if (!open) return make_problem(db_path + ": " + open.problem().message);
  std::error_code ec;
  fs::create_directories(folder, ec);
  std::string stamp = utc_now().substr(0, 19);
  std::replace(stamp.begin(), stamp.end(), ':', '-');
  const std::string out = (fs::path(folder) / (fs::path(db_path).stem().string() + "-" + open->trial.device_id + "-" +
                                              stamp + ".bundle"))
                              .string();
  auto m = write_bundle(open->db, open->trial, out);
  if (!m) return m.problem();
  return out;
}

Result<std::string> export_clean_data(const std::string& db_path, const std::string& folder) {
  auto open = open_trial_database(db_path);
  if (!open) return make_problem(db_path + ": " + open.problem().message);
  auto live = live_observations(open->db, 0);
  if (!live) return live.problem();
  std::error_code ec;
  fs::create_directories(folder, ec);
  const std::string out = (fs::path(folder) / (fs::path(db_path).stem().string() + ".csv")).string();
  if (auto s = write_text_file(out, wide_data_csv(open->trial, *live)); !s) return s.problem();
  return out;
}

Result<std::string> export_report(const std::string& db_path, const std::string& folder) {
  std::error_code ec;
  fs::create_directories(folder, ec);
  const std::string out = (fs::path(folder) / (fs::path(db_path).stem().string() + ".html")).string();
  if (auto s = write_report(db_path, out, ReportOptions{}); !s) return s.problem();
  return out;
}

}  // namespace furrow
