#define SQLITE_ENABLE_SESSION
#include "storage/sqlite_db.h"

#include <sqlite3.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <optional>

#include <unistd.h>

namespace furrow {

Statement::~Statement() {
  if (stmt_) sqlite3_finalize(stmt_);
}

Statement& Statement::bind(int i, std::int64_t v) { sqlite3_bind_int64(stmt_, i, v); return *this; }
Statement& Statement::bind(int i, double v) { sqlite3_bind_double(stmt_, i, v); return *this; }
Statement& Statement::bind(int i, const std::string& v) {
  sqlite3_bind_text(stmt_, i, v.data(), static_cast<int>(v.size()), SQLITE_TRANSIENT);
  return *this;
}
Statement& Statement::bind(int i, const std::optional<std::string>& v) {
  if (v) return bind(i, *v);
  sqlite3_bind_null(stmt_, i);
  return *this;
}
Statement& Statement::bind(int i, const std::optional<double>& v) {
  if (v) return bind(i, *v);
  sqlite3_bind_null(stmt_, i);
  return *this;
}

std::string plain_sqlite_error(int code, const std::string& detail) {
  switch (code & 0xFF) {
    case SQLITE_FULL: return "the disk is full (" + detail + "): nothing was saved; free some space and try again";
    case SQLITE_READONLY:
      return "the file cannot be written (" + detail + "): a read-only file system, a read-only file or no permission";
    case SQLITE_BUSY:
    case SQLITE_LOCKED:
      return "another program is using the trial file (a merge or a copy?) and held it for more than 5 s (" + detail +
             "): nothing was saved; try again";
    case SQLITE_CANTOPEN:
      return "the file cannot be opened (" + detail + "): check that the folder exists and can be written";
    case SQLITE_IOERR: return "the disk failed to read or write (" + detail + "): check the storage and free space";
    case SQLITE_CORRUPT:
    case SQLITE_NOTADB: return "the file is damaged or not a Furrow file (" + detail + ")";
    default: return detail;
  }
}

bool Statement::step() {
  const int rc = sqlite3_step(stmt_);
  if (rc == SQLITE_ROW) return true;
  if (rc != SQLITE_DONE && error_.empty())
    error_ = plain_sqlite_error(sqlite3_extended_errcode(sqlite3_db_handle(stmt_)), sqlite3_errmsg(sqlite3_db_handle(stmt_)));
  return false;
}

Status Statement::run() {
  while (step()) {
  }
  if (failed()) return make_problem(error_);
  return ok_status();
}

void Statement::reset() {
  sqlite3_reset(stmt_);
  sqlite3_clear_bindings(stmt_);
  error_.clear();
}

std::int64_t Statement::integer(int col) const { return sqlite3_column_int64(stmt_, col); }
double Statement::real(int col) const { return sqlite3_column_double(stmt_, col); }
std::string Statement::text(int col) const {
  const auto* p = sqlite3_column_text(stmt_, col);
  return p ? std::string(reinterpret_cast<const char*>(p), static_cast<size_t>(sqlite3_column_bytes(stmt_, col)))
           : std::string();
}
std::string Statement::blob(int col) const {
  const void* p = sqlite3_column_blob(stmt_, col);
  return p ? std::string(static_cast<const char*>(p), static_cast<size_t>(sqlite3_column_bytes(stmt_, col)))
           : std::string();
}
Statement& Statement::bind_blob(int i, const std::string& v) {
  sqlite3_bind_blob(stmt_, i, v.data(), static_cast<int>(v.size()), SQLITE_TRANSIENT);
  return *this;
}
bool Statement::is_null(int col) const { return sqlite3_column_type(stmt_, col) == SQLITE_NULL; }
std::optional<std::string> Statement::optional_text(int col) const {
  if (is_null(col)) return std::nullopt;
  return text(col);
}
std::optional<double> Statement::optional_real(int col) const {
  if (is_null(col)) return std::nullopt;
  return real(col);
}

Database& Database::operator=(Database&& o) noexcept {
  if (this != &o) {
    if (db_) sqlite3_close_v2(db_);
    db_ = o.db_;
    o.db_ = nullptr;
    steps_ = std::move(o.steps_);
  }
  return *this;
}

Database::~Database() {
  if (db_) sqlite3_close_v2(db_);
}

namespace {

// "file:PATH" with what a URI path cannot hold percent-encoded, and `query`.
std::string uri_of(const std::string& path, const std::string& query) {
  std::string uri = "file:";
  for (unsigned char c : path) {
    if (c == '%' || c == '?' || c == '#' || c < 0x20) {
      char buf[4];
      std::snprintf(buf, sizeof buf, "%%%02X", c);
      uri += buf;
    } else {
      uri += static_cast<char>(c);
    }
  }
  return uri + "?" + query;
}

// Why the folder of `path` cannot be written ("" when it can).
std::string unwritable_folder(const std::string& path) {
  std::error_code ec;
  const auto folder = std::filesystem::absolute(path, ec).parent_path();
  if (ec) return "";
  if (::access(folder.c_str(), W_OK) == 0) return "";
  if (errno == EROFS) return "it is on a read-only file system (a write-protected card or drive?)";
  if (errno == EACCES) return "its folder cannot be written (no permission)";
  return "";
}

}  // namespace

Result<Database> Database::open(const std::string& path, bool create) {
  Database d;
  const int flags = SQLITE_OPEN_READWRITE | (create ? SQLITE_OPEN_CREATE : 0);
  const auto unwritable = [&]() -> std::optional<Problem> {
    const std::string why = unwritable_folder(path);
    if (why.empty()) return std::nullopt;
    return make_problem(path + ": " + why + ": it can be shown, exported and analysed, but nothing can be saved");
  };
  if (const int rc = sqlite3_open_v2(path.c_str(), &d.db_, flags, nullptr); rc != SQLITE_OK) {
    if (auto p = unwritable()) return *p;
    std::string msg = d.db_ ? sqlite3_errmsg(d.db_) : "out of memory";
    return make_problem(path + ": " + plain_sqlite_error(rc, msg));
  }
  sqlite3_busy_timeout(d.db_, 5000);
  for (const char* pragma : {"PRAGMA foreign_keys = ON", "PRAGMA journal_mode = WAL", "PRAGMA synchronous = FULL"}) {
    if (auto s = d.exec(pragma); !s) {
      if (auto p = unwritable()) return *p;
      return make_problem(path + ": " + s.problem().message);
    }
  }
  if (!create && sqlite3_db_readonly(d.db_, "main") == 1)
    return make_problem(path + ": " + plain_sqlite_error(SQLITE_READONLY, "opened read-only"));
  return d;
}

namespace {

// The hardening of a connection to an untrusted database (SQLite's "Defense
// against the dark arts" advice): no functions or virtual tables run from
// its schema, no writes to the schema even by accident, corrupt cells caught
// on read, bounded strings and queries, and no query that runs without end
// (a recursive view, say) - the progress handler stops any statement after
// kUntrustedStepLimit virtual-machine steps.
void harden(sqlite3* db, std::int64_t* steps) {
  sqlite3_db_config(db, SQLITE_DBCONFIG_DEFENSIVE, 1, nullptr);
  sqlite3_db_config(db, SQLITE_DBCONFIG_TRUSTED_SCHEMA, 0, nullptr);
  sqlite3_db_config(db, SQLITE_DBCONFIG_ENABLE_TRIGGER, 0, nullptr);
  sqlite3_db_config(db, SQLITE_DBCONFIG_ENABLE_VIEW, 0, nullptr);
  sqlite3_limit(db, SQLITE_LIMIT_LENGTH, kUntrustedMaxBytes);
  sqlite3_limit(db, SQLITE_LIMIT_SQL_LENGTH, 100000);
  sqlite3_limit(db, SQLITE_LIMIT_COLUMN, 100);
  sqlite3_limit(db, SQLITE_LIMIT_EXPR_DEPTH, 100);
  sqlite3_limit(db, SQLITE_LIMIT_COMPOUND_SELECT, 3);
  sqlite3_limit(db, SQLITE_LIMIT_ATTACHED, 0);
  sqlite3_limit(db, SQLITE_LIMIT_TRIGGER_DEPTH, 1);
  sqlite3_progress_handler(
      db, 100000,
      [](void* p) -> int {
        auto* count = static_cast<std::int64_t*>(p);
        *count += 100000;
        return *count > kUntrustedStepLimit ? 1 : 0;
      },
      steps);
}

}  // namespace

Result<Database> Database::open_read_only(const std::string& path) {
  Database d;
  const std::string uri = uri_of(path, "immutable=1");
  if (sqlite3_open_v2(uri.c_str(), &d.db_, SQLITE_OPEN_READONLY | SQLITE_OPEN_URI, nullptr) != SQLITE_OK) {
    std::string msg = d.db_ ? sqlite3_errmsg(d.db_) : "out of memory";
    return make_problem("cannot open " + path + ": " + msg);
  }
  d.steps_ = std::make_unique<std::int64_t>(0);
  harden(d.db_, d.steps_.get());
  for (const char* pragma : {"PRAGMA cell_size_check = ON", "PRAGMA mmap_size = 0"})
    if (auto st = d.exec(pragma); !st) return make_problem(path + ": " + st.problem().message);
  return d;
}

Result<Database> Database::open_untrusted_image(const std::string& image) {
  Database d;
  if (sqlite3_open_v2(":memory:", &d.db_, SQLITE_OPEN_READWRITE, nullptr) != SQLITE_OK)
    return make_problem("cannot open an in-memory database (out of memory)");
  d.steps_ = std::make_unique<std::int64_t>(0);
  harden(d.db_, d.steps_.get());
  if (auto st = d.exec("PRAGMA cell_size_check = ON"); !st) return st.problem();
  auto* buffer = static_cast<unsigned char*>(sqlite3_malloc64(image.size() ? image.size() : 1));
  if (!buffer) return make_problem("no memory for a database of " + std::to_string(image.size()) + " bytes");
  std::memcpy(buffer, image.data(), image.size());
  const int rc = sqlite3_deserialize(d.db_, "main", buffer, static_cast<sqlite3_int64>(image.size()),
                                     static_cast<sqlite3_int64>(image.size()),
                                     SQLITE_DESERIALIZE_FREEONCLOSE | SQLITE_DESERIALIZE_READONLY);
  if (rc != SQLITE_OK) return make_problem(plain_sqlite_error(rc, sqlite3_errmsg(d.db_)));
  return d;
}

Result<Database> Database::open_image_copy(const std::string& image) {
  Database d;
  if (sqlite3_open_v2(":memory:", &d.db_, SQLITE_OPEN_READWRITE, nullptr) != SQLITE_OK)
    return make_problem("cannot open an in-memory database (out of memory)");
  auto* buffer = static_cast<unsigned char*>(sqlite3_malloc64(image.size() ? image.size() : 1));
  if (!buffer) return make_problem("no memory for a database of " + std::to_string(image.size()) + " bytes");
  std::memcpy(buffer, image.data(), image.size());
  // A file in WAL mode says so in its header (bytes 18 and 19 are 2); a
  // database in memory has no WAL: mark the copy as a rollback-journal file.
  if (image.size() >= 100) buffer[18] = buffer[19] = 1;
  const int rc = sqlite3_deserialize(d.db_, "main", buffer, static_cast<sqlite3_int64>(image.size()),
                                     static_cast<sqlite3_int64>(image.size()),
                                     SQLITE_DESERIALIZE_FREEONCLOSE | SQLITE_DESERIALIZE_RESIZEABLE);
  if (rc != SQLITE_OK) return make_problem(plain_sqlite_error(rc, sqlite3_errmsg(d.db_)));
  sqlite3_db_config(d.db_, SQLITE_DBCONFIG_DEFENSIVE, 1, nullptr);
  if (auto st = d.exec("PRAGMA foreign_keys = ON"); !st) return st.problem();
  return d;
}

Result<Database> Database::create_in_memory() {
  Database d;
  if (sqlite3_open_v2(":memory:", &d.db_, SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE, nullptr) != SQLITE_OK)
    return make_problem("cannot open an in-memory database (out of memory)");
  return d;
}

Result<std::string> Database::image() const {
  sqlite3_int64 size = 0;
  unsigned char* bytes = sqlite3_serialize(db_, "main", &size, 0);
  if (!bytes) return make_problem("cannot take the database's image (out of memory)");
  std::string out(reinterpret_cast<const char*>(bytes), static_cast<size_t>(size));
  sqlite3_free(bytes);
  return out;
}

Result<Database> Database::open_looking(const std::string& path) {
  Database d;
  if (const int rc = sqlite3_open_v2(path.c_str(), &d.db_, SQLITE_OPEN_READONLY, nullptr); rc != SQLITE_OK) {
    std::string msg = d.db_ ? sqlite3_errmsg(d.db_) : "out of memory";
    return make_problem(path + ": " + plain_sqlite_error(rc, msg));
  }
  sqlite3_busy_timeout(d.db_, 5000);
  sqlite3_db_config(d.db_, SQLITE_DBCONFIG_DEFENSIVE, 1, nullptr);
  sqlite3_db_config(d.db_, SQLITE_DBCONFIG_TRUSTED_SCHEMA, 0, nullptr);
  if (d.exec("SELECT 1 FROM sqlite_master LIMIT 1")) return d;
  // A file in WAL mode in a folder that cannot be written (a read-only file
  // system): SQLite cannot make the shared-memory file beside it. With no
  // log left beside the file, everything is in the file: read it as it is.
  const std::string why = unwritable_folder(path);
  std::error_code ec;
  const auto wal = std::filesystem::file_size(path + "-wal", ec);
  if (why.empty()) return d;   // the caller's first query says what is wrong
  if (!ec && wal > 0)
    return make_problem(path + ": " + why + ", and the file's last saves are still in " + path +
                        "-wal beside it; copy both files to a folder that can be written and open the copy");
  Database r;
  if (sqlite3_open_v2(uri_of(path, "immutable=1").c_str(), &r.db_, SQLITE_OPEN_READONLY | SQLITE_OPEN_URI, nullptr) !=
      SQLITE_OK)
    return make_problem(path + ": " + why + " and the file cannot be read there");
  sqlite3_db_config(r.db_, SQLITE_DBCONFIG_DEFENSIVE, 1, nullptr);
  sqlite3_db_config(r.db_, SQLITE_DBCONFIG_TRUSTED_SCHEMA, 0, nullptr);
  return r;
}

Result<Database> Database::create_standalone(const std::string& path) {
  Database d;
  if (sqlite3_open_v2(path.c_str(), &d.db_, SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE, nullptr) != SQLITE_OK) {
    std::string msg = d.db_ ? sqlite3_errmsg(d.db_) : "out of memory";
    return make_problem("cannot create " + path + ": " + msg);
  }
  for (const char* pragma : {"PRAGMA journal_mode = DELETE", "PRAGMA synchronous = FULL"})
    if (auto s = d.exec(pragma); !s) return make_problem(path + ": " + s.problem().message);
  return d;
}

int Database::changes() const { return sqlite3_changes(db_); }

Status Database::exec(const std::string& sql) {
  char* err = nullptr;
  if (const int rc = sqlite3_exec(db_, sql.c_str(), nullptr, nullptr, &err); rc != SQLITE_OK) {
    std::string msg = err ? err : "unknown error";
    sqlite3_free(err);
    return make_problem(plain_sqlite_error(sqlite3_extended_errcode(db_) ? sqlite3_extended_errcode(db_) : rc, msg));
  }
  return ok_status();
}

Result<Statement> Database::prepare(const std::string& sql) {
  sqlite3_stmt* s = nullptr;
  if (sqlite3_prepare_v2(db_, sql.c_str(), static_cast<int>(sql.size()), &s, nullptr) != SQLITE_OK)
    return make_problem(plain_sqlite_error(sqlite3_extended_errcode(db_), sqlite3_errmsg(db_)));
  return Statement(s);
}

std::int64_t Database::last_insert_rowid() const { return sqlite3_last_insert_rowid(db_); }

}  // namespace furrow
