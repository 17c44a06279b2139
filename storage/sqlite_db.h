#pragma once
// A thin RAII layer over SQLite: an open database and prepared statements.
// Errors come back as Problems carrying SQLite's message; nothing throws.

#include <cstdint>
#include <optional>
#include <memory>
#include <string>

#include "core/result.h"

struct sqlite3;
struct sqlite3_stmt;

namespace furrow {

class Statement {
 public:
  Statement() = default;
  Statement(const Statement&) = delete;
  Statement& operator=(const Statement&) = delete;
  Statement(Statement&& o) noexcept : stmt_(o.stmt_) { o.stmt_ = nullptr; }
  ~Statement();

  // Binding is 1-based like SQLite. A nullopt binds NULL.
  Statement& bind(int i, std::int64_t v);
  Statement& bind(int i, int v) { return bind(i, static_cast<std::int64_t>(v)); }
  Statement& bind(int i, double v);
  Statement& bind(int i, const std::string& v);
  Statement& bind(int i, const char* v) { return bind(i, std::string(v)); }
  Statement& bind(int i, const std::optional<std::string>& v);
  Statement& bind(int i, const std::optional<double>& v);
  Statement& bind_blob(int i, const std::string& bytes);

  // Steps once: true when a row is ready, false when done or on error (then
  // `failed()` is true and `error()` holds SQLite's message).
  bool step();
  Status run();                      // steps to the end
  void reset();

  std::int64_t integer(int col) const;
  double real(int col) const;
  std::string text(int col) const;
  std::string blob(int col) const;   // the bytes of a BLOB (or of a text)
  bool is_null(int col) const;
  std::optional<std::string> optional_text(int col) const;   // nullopt for NULL
  std::optional<double> optional_real(int col) const;
  bool failed() const { return !error_.empty(); }
  const std::string& error() const { return error_; }

 private:
  friend class Database;
  explicit Statement(sqlite3_stmt* s) : stmt_(s) {}
  sqlite3_stmt* stmt_ = nullptr;
  std::string error_;
};

class Database {
 public:
  Database() = default;
  Database(const Database&) = delete;
  Database& operator=(const Database&) = delete;
  Database(Database&& o) noexcept : db_(o.db_), steps_(std::move(o.steps_)) { o.db_ = nullptr; }
  Database& operator=(Database&& o) noexcept;
  ~Database();

  // Opens (create = true: creates) the file with foreign keys on, WAL journal
  // and synchronous=FULL: every commit is on disk when it returns.
  static Result<Database> open(const std::string& path, bool create);
  // Opens an untrusted file (a bundle from another device) for reading only,
  // as immutable: nothing is written beside it (no journal), a damaged file
  // fails on read, not on open; defensive mode on, schema not trusted, no
  // triggers or views run, strings at most kUntrustedMaxBytes, and the whole
  // connection stops after kUntrustedStepLimit virtual-machine steps. The
  // caller must still check the schema before its first query.
  static Result<Database> open_read_only(const std::string& path);
  // Opens a file of ours for reading only, seeing what its WAL holds too;
  // writes nothing to the file itself.
  static Result<Database> open_looking(const std::string& path);
  // An untrusted database image (a bundle's, already read into memory),
  // opened read-only in memory with the same hardening as open_read_only.
  static Result<Database> open_untrusted_image(const std::string& image);
  // A writable copy in memory of one of our own databases' image (a file
  // of an older schema, upgraded without writing to the file).
  static Result<Database> open_image_copy(const std::string& image);
  // A new empty database in memory (built, then taken whole with image()).
  static Result<Database> create_in_memory();
  // The database's bytes, as its file would hold them.
  Result<std::string> image() const;
  // A file written once as a whole: rollback journal (no WAL beside it),
  // synchronous=FULL.
  static Result<Database> create_standalone(const std::string& path);

  Status exec(const std::string& sql);
  Result<Statement> prepare(const std::string& sql);
  std::int64_t last_insert_rowid() const;
  int changes() const;   // rows changed by the last statement
  sqlite3* handle() const { return db_; }

 private:
  sqlite3* db_ = nullptr;
  std::unique_ptr<std::int64_t> steps_;   // untrusted files: steps run so far
};

// Limits for untrusted files (ours; generous for a day of a large trial:
// a 20,000-row bundle is read and merged in well under 10^8 steps).
inline constexpr int kUntrustedMaxBytes = 1 << 20;
inline constexpr std::int64_t kUntrustedStepLimit = 2'000'000'000;

// SQLite's error in the words a crew or station manager needs: what
// happened (disk full, read-only, held by another program, damaged) and
// that nothing was saved; `detail` is SQLite's own message, kept in brackets.
std::string plain_sqlite_error(int code, const std::string& detail);

// Returns the Problem of a failed Status or Result from the enclosing
// function (which returns Status or a Result).
#define FURROW_TRY(expr)                                  \
  do {                                                    \
    auto furrow_status_ = (expr);                         \
    if (!furrow_status_) return furrow_status_.problem(); \
  } while (0)

// Runs `body` inside BEGIN IMMEDIATE ... COMMIT; rolls back when it fails.
template <class F>
Status in_transaction(Database& db, F body) {
  if (auto s = db.exec("BEGIN IMMEDIATE"); !s) return s;
  Status result = body();
  if (!result) {
    db.exec("ROLLBACK");
    return result;
  }
  if (auto s = db.exec("COMMIT"); !s) {
    db.exec("ROLLBACK");
    return s;
  }
  return result;
}

}  // namespace furrow
