#pragma once
// Verified backups of trial files, and restoring one.
//
// A trial file that the app has open keeps its newest rows in the write-ahead
// log beside it (FILE.furrow-wal) until SQLite folds them in: copying the
// .furrow file alone then loses them. A backup is taken through SQLite's
// online backup (sqlite3_backup_*), which copies one consistent state of the
// database, WAL included, while devices go on writing; the copy is then
// checked (PRAGMA integrity_check, and its log holds exactly as many rows as
// the trial held at that moment) before it takes its final name.

#include <cstdint>
#include <string>
#include <vector>

#include "core/result.h"

namespace furrow {

struct BackupCopy {
  std::string path;          // FOLDER/<trial file stem>-YYYYMMDD-HHMMSS.mmmZ.furrow (UTC)
  std::int64_t log_rows = 0; // observations in the copy (and in the trial at that moment)
};

// Backs `trial_path` up into `folder` (created when missing) and keeps the
// newest `keep` backups of that trial there (older ones are removed; keep
// 0: all). Nothing is left under the final name unless the copy passed its
// checks.
Result<BackupCopy> backup_trial(const std::string& trial_path, const std::string& folder, int keep);

// Checks a backup file: SQLite's integrity check, a trial file Furrow can
// open, and its log's row count.
Result<std::int64_t> verify_backup(const std::string& backup_path);

// Restores a checked backup as `target_path`. An existing target is refused
// unless `replace` (then it is kept beside as TARGET.before-restore-<time>).
Status restore_trial(const std::string& backup_path, const std::string& target_path, bool replace);

// The backups of one trial in `folder`, oldest first.
std::vector<std::string> backups_of(const std::string& folder, const std::string& trial_stem);

}  // namespace furrow
