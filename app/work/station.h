#pragma once
// The station's day's-end work without any drawing: import every bundle in a
// folder into the trial database it belongs to (one bundle per step, so that
// a screen can show progress), write this device's bundle, export clean data
// and the report. Tested headlessly.

#include <cstdint>
#include <optional>
#include <set>
#include <string>
#include <vector>

#include "core/result.h"

namespace furrow {

// Bundle files (*.bundle) in `folder`, by name.
std::vector<std::string> list_bundle_files(const std::string& folder);

struct BundleOutcome {
  std::string file;              // file name
  bool merged = false;
  bool refused = false;          // not merged and never will be (kept in refused/)
  std::string trial_name;
  std::int64_t observations_added = 0;
  std::string message;           // plain words: what happened or why it was refused
};

// The station's bundle folders under the data folder: bundles arrive in
// incoming/; each one read is moved to done/ (merged) or refused/ (not a
// bundle, damaged, altered, another plan), so that nothing is read twice and
// nothing is lost; a bundle for a trial this device does not hold stays in
// incoming/. This device's own bundles go to outgoing/.
struct BundleFolders {
  std::string incoming, done, refused, outgoing;
};
BundleFolders bundle_folders(const std::string& data_folder);

class StationImport {
 public:
  // Bundles in `bundle_folder`; trials in `trial_folder` and `also` (the
  // open trial may live elsewhere), matched by the trial's identity in each
  // bundle. With `folders`, each bundle read is moved to done/ or refused/.
  StationImport(const std::string& bundle_folder, const std::string& trial_folder,
                const std::vector<std::string>& also = {}, const BundleFolders* folders = nullptr);
  bool done() const { return next_ >= files_.size(); }
  size_t total() const { return files_.size(); }
  size_t finished() const { return next_; }
  const std::string& current_file() const;   // the next to merge ("" when done)
  // Merges the next bundle (each in its own transaction).
  void step();
  const std::vector<BundleOutcome>& outcomes() const { return outcomes_; }

 private:
  std::vector<std::string> files_;
  std::vector<std::pair<std::string, std::string>> trials_;   // uid, path
  size_t next_ = 0;
  std::vector<BundleOutcome> outcomes_;
  std::optional<BundleFolders> folders_;
  std::set<std::string> retried_;   // bundles waiting for a device's earlier rows, read once more at the end
  void file_away(const std::string& path, bool merged, BundleOutcome* o);
};

// Writes this device's bundle to `folder` as "<trial file>-<device>-<UTC time>.bundle".
Result<std::string> write_device_bundle(const std::string& db_path, const std::string& folder);

// Writes the wide table (one line per plot; conflicts marked) to
// `folder/<trial file>.csv`. Returns the path.
Result<std::string> export_clean_data(const std::string& db_path, const std::string& folder);

// Writes the report to `folder/<trial file>.html`. Returns the path.
Result<std::string> export_report(const std::string& db_path, const std::string& folder);

}  // namespace furrow
