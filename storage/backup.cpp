#include "storage/backup.h"

#include <sqlite3.h>

#include <algorithm>
#include <cstdio>
#include <ctime>
#include <filesystem>

#include "storage/sqlite_db.h"
#include "storage/trial_store.h"

namespace fs = std::filesystem;

namespace furrow {
namespace {

// UTC time to the millisecond: YYYYMMDD-HHMMSS.mmmZ (sorts as time does).
std::string stamp() {
  timespec ts{};
  clock_gettime(CLOCK_REALTIME, &ts);
  std::tm utc{};
  gmtime_r(&ts.tv_sec, &utc);
  char b[40];
  const size_t n = std::strftime(b, sizeof b, "%Y%m%d-%H%M%S", &utc);
  std::snprintf(b + n, sizeof b - n, ".%03dZ", static_cast<int>(ts.tv_nsec / 1000000));
  return b;
}

// Copies `from` (an open connection) into the file `to` with the online
// backup, in one step: one consistent state.
Status copy_database(sqlite3* from, const std::string& to) {
  sqlite3* dest = nullptr;
  if (sqlite3_open_v2(to.c_str(), &dest, SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE, nullptr) != SQLITE_OK) {
    const std::string why = dest ? sqlite3_errmsg(dest) : "out of memory";
    sqlite3_close(dest);
    return make_problem("cannot write " + to + ": " + why);
  }
  sqlite3_backup* b = sqlite3_backup_init(dest, "main", from, "main");
  if (!b) {
    const std::string why = sqlite3_errmsg(dest);
    sqlite3_close(dest);
    return make_problem("cannot start the copy to " + to + ": " + why);
  }
  int rc = SQLITE_OK;
  do {
    rc = sqlite3_backup_step(b, -1);
    if (rc == SQLITE_BUSY || rc == SQLITE_LOCKED) sqlite3_sleep(50);
  } while (rc == SQLITE_OK || rc == SQLITE_BUSY || rc == SQLITE_LOCKED);
  sqlite3_backup_finish(b);
  const std::string why = sqlite3_errmsg(dest);
  sqlite3_close(dest);
  if (rc != SQLITE_DONE) return make_problem(plain_sqlite_error(rc, "copying to " + to + ": " + why));
  return ok_status();
}

Result<std::int64_t> count_log(Database& db) {
  auto s = db.prepare("SELECT count(*) FROM observation");
  if (!s) return s.problem();
  if (!s->step()) return make_problem(s->failed() ? s->error() : "no count");
  return s->integer(0);
}

void remove_with_sidecars(const std::string& path) {
  std::error_code ec;
  for (const char* s : {"", "-wal", "-shm", "-journal"}) fs::remove(path + s, ec);
}

}  // namespace

std::vector<std::string> backups_of(const std::string& folder, const std::string& stem) {
  std::vector<std::string> out;
  std::error_code ec;
  for (const auto& e : fs::directory_iterator(folder, ec)) {
    const std::string name = e.path().filename().string();
    // <stem>-YYYYMMDD-HHMMSS.mmmZ.furrow, where <stem> is the file's name and its trial's identity
    if (name.size() == stem.size() + 1 + 20 + 7 && name.rfind(stem + "-", 0) == 0 &&
        name.compare(name.size() - 7, 7, ".furrow") == 0 && name[stem.size() + 9] == '-')
      out.push_back(e.path().string());
  }
  std::sort(out.begin(), out.end());
  return out;
}

Result<std::int64_t> verify_backup(const std::string& path) {
  // Reading a file of ours makes SQLite's -shm beside it: removed again if it was not there.
  std::error_code ec;
  const bool had_wal = fs::exists(path + "-wal", ec), had_shm = fs::exists(path + "-shm", ec);
  struct Tidy {
    std::string path;
    bool had_wal, had_shm;
    ~Tidy() {
      std::error_code e;
      if (!had_wal && fs::exists(path + "-wal", e) && fs::file_size(path + "-wal", e) == 0) fs::remove(path + "-wal", e);
      if (!had_shm) fs::remove(path + "-shm", e);
    }
  } tidy{path, had_wal, had_shm};
  {
    auto db = Database::open_looking(path);
    if (!db) return make_problem(path + ": " + db.problem().message);
    auto ic = db->prepare("PRAGMA integrity_check");
    if (!ic) return make_problem(path + ": " + ic.problem().message);
    if (!ic->step() || ic->text(0) != "ok")
      return make_problem(path + ": the copy fails SQLite's integrity check (" + (ic->failed() ? ic->error() : ic->text(0)) + ")");
  }
  auto open = open_trial_database(path, Access::read_only);
  if (!open) return make_problem(path + ": not a trial file Furrow can open: " + open.problem().message);
  auto n = count_log(open->db);
  if (!n) return make_problem(path + ": " + n.problem().message);
  return *n;
}

Result<BackupCopy> backup_trial(const std::string& trial_path, const std::string& folder, int keep) {
  std::error_code ec;
  fs::create_directories(folder, ec);
  if (ec) return make_problem("cannot make the backup folder " + folder + ": " + ec.message());
  auto trial = open_trial_database(trial_path, Access::read_only);
  if (!trial) return make_problem(trial_path + ": " + trial.problem().message);
  auto src = Database::open_looking(trial_path);
  if (!src) return make_problem(trial_path + ": " + src.problem().message);
  // Named by the file and its trial's identity and role: backups of two
  // trials (or of the station's file and a device's copy) with one file name
  // are never taken for each other when old ones are removed.
  const std::string stem = fs::path(trial_path).stem().string() + "-" + trial->trial.uid.substr(0, 8) +
                           (trial->trial.role == "station" ? "" : "-" + trial->trial.device_id.substr(0, 8));
  std::string final_path = (fs::path(folder) / (stem + "-" + stamp() + ".furrow")).string();
  while (fs::exists(final_path)) {   // two backups in one millisecond
    sqlite3_sleep(2);
    final_path = (fs::path(folder) / (stem + "-" + stamp() + ".furrow")).string();
  }
  const std::string part = final_path + ".part";
  remove_with_sidecars(part);
  // One read transaction: the count and the copy see the same state.
  if (auto s = src->exec("BEGIN"); !s) return make_problem(trial_path + ": " + s.problem().message);
  auto rows = count_log(*src);
  Status copied = rows ? copy_database(src->handle(), part) : Status(rows.problem());
  src->exec("COMMIT");
  if (!copied) {
    remove_with_sidecars(part);
    return make_problem(trial_path + ": backup not taken: " + copied.problem().message);
  }
  auto held = verify_backup(part);
  if (!held || *held != *rows) {
    const std::string why = held ? "the copy holds " + std::to_string(*held) + " rows of the log, the trial held " +
                                       std::to_string(*rows)
                                 : held.problem().message;
    remove_with_sidecars(part);
    return make_problem(trial_path + ": backup not taken: " + why);
  }
  for (const char* side : {"-wal", "-shm", "-journal"}) fs::remove(part + side, ec);
  fs::rename(part, final_path, ec);
  if (ec) {
    remove_with_sidecars(part);
    return make_problem("cannot name the backup " + final_path + ": " + ec.message());
  }
  if (keep > 0) {
    auto all = backups_of(folder, stem);
    for (size_t i = 0; i + static_cast<size_t>(keep) < all.size(); ++i) remove_with_sidecars(all[i]);
  }
  return BackupCopy{final_path, *rows};
}

Status restore_trial(const std::string& backup_path, const std::string& target_path, bool replace) {
  std::error_code ec;
  if (!fs::is_regular_file(backup_path, ec)) return make_problem(backup_path + ": no such backup file");
  const fs::path folder = fs::absolute(target_path, ec).parent_path();
  if (!fs::is_directory(folder, ec)) return make_problem("the folder " + folder.string() + " does not exist");
  auto rows = verify_backup(backup_path);
  if (!rows) return rows.problem();
  const bool exists = fs::exists(target_path);
  if (exists && !replace)
    return make_problem(target_path + " exists; nothing was changed (restore over it with --replace: the file is kept "
                                      "beside it)");
  if (exists) {
    // Only a backup of this very file: the same trial, the same role and device.
    auto now = open_trial_database(target_path, Access::read_only);
    auto then = open_trial_database(backup_path, Access::read_only);
    if (now && then &&
        (now->trial.uid != then->trial.uid || now->trial.role != then->trial.role ||
         now->trial.device_id != then->trial.device_id))
      return make_problem(backup_path + " is a backup of " +
                          (now->trial.uid != then->trial.uid ? "another trial ('" + then->trial.plan.name + "')"
                                                             : then->trial.role == "station" ? std::string("the station's file")
                                                                                             : "a device's copy (" + then->trial.device_id + ")") +
                          ", not of " + target_path + "; nothing was changed");
  }
  auto src = Database::open_looking(backup_path);
  if (!src) return make_problem(backup_path + ": " + src.problem().message);
  const std::string part = target_path + ".restoring";
  remove_with_sidecars(part);
  if (auto c = copy_database(src->handle(), part); !c) {
    remove_with_sidecars(part);
    return c;
  }
  auto copied = verify_backup(part);
  if (!copied || *copied != *rows) {
    remove_with_sidecars(part);
    return make_problem(target_path + ": not restored: the copy did not check out");
  }
  if (exists) {
    // The file being replaced, whole (WAL folded in), kept beside it.
    auto old = Database::open_looking(target_path);
    const std::string kept = target_path + ".before-restore-" + stamp();
    Status saved = old ? copy_database(old->handle(), kept) : Status(old.problem());
    if (!saved) {
      remove_with_sidecars(part);
      return make_problem(target_path + ": not restored: cannot keep the present file first: " + saved.problem().message);
    }
  }
  remove_with_sidecars(target_path + "-wal");
  std::error_code e2;
  fs::remove(target_path + "-shm", e2);
  for (const char* side : {"-wal", "-shm", "-journal"}) fs::remove(part + side, e2);
  fs::rename(part, target_path, ec);
  if (ec) return make_problem("cannot put the restored file in place: " + ec.message());
  return ok_status();
}

}  // namespace furrow
