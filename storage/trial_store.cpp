// trial_store.cpp: schema, migrations, trial creation and the observation log.

#include "storage/trial_store.h"

#include <charconv>
#include <chrono>
#include <cstdio>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <random>
#include <tuple>
#include <unordered_map>

#include "storage/enrolment.h"

namespace furrow {
namespace {

// Version 1. STRICT tables; the log refuses UPDATE and DELETE.
constexpr const char* kSchemaV1 = R"sql(
CREATE TABLE trial (
  id INTEGER PRIMARY KEY,
  name TEXT NOT NULL, site TEXT NOT NULL, season TEXT NOT NULL,
  design TEXT NOT NULL, replicates INTEGER NOT NULL,
  grid_rows INTEGER NOT NULL, grid_columns INTEGER NOT NULL,
  plot_length_m REAL NOT NULL, plot_width_m REAL NOT NULL,
  block_shape TEXT NOT NULL, block_rows INTEGER NOT NULL, block_columns INTEGER NOT NULL,
  walk TEXT NOT NULL, seed TEXT NOT NULL,
  sites TEXT NOT NULL,
  status TEXT NOT NULL CHECK (status IN ('planning', 'collecting', 'closed')),
  created_at TEXT NOT NULL, closed_at TEXT
) STRICT;
CREATE TABLE factor (
  id INTEGER PRIMARY KEY,
  trial_id INTEGER NOT NULL REFERENCES trial(id),
  name TEXT NOT NULL, position INTEGER NOT NULL,
  UNIQUE (trial_id, name)
) STRICT;
CREATE TABLE level (
  id INTEGER PRIMARY KEY,
  factor_id INTEGER NOT NULL REFERENCES factor(id),
  label TEXT NOT NULL, position INTEGER NOT NULL,
  UNIQUE (factor_id, label)
) STRICT;
CREATE TABLE plot (
  id INTEGER PRIMARY KEY,
  trial_id INTEGER NOT NULL REFERENCES trial(id),
  label TEXT NOT NULL, site TEXT NOT NULL, block INTEGER NOT NULL,
  field_row INTEGER NOT NULL, field_column INTEGER NOT NULL, walk_order INTEGER NOT NULL,
  UNIQUE (trial_id, label), UNIQUE (trial_id, site, field_row, field_column)
) STRICT;
CREATE TABLE plot_level (
  plot_id INTEGER NOT NULL REFERENCES plot(id),
  factor_id INTEGER NOT NULL REFERENCES factor(id),
  level_id INTEGER NOT NULL REFERENCES level(id),
  PRIMARY KEY (plot_id, factor_id)
) STRICT;
CREATE TABLE trait (
  id INTEGER PRIMARY KEY,
  trial_id INTEGER NOT NULL REFERENCES trial(id),
  code TEXT NOT NULL, name TEXT NOT NULL, unit TEXT NOT NULL, kind TEXT NOT NULL,
  decimals INTEGER NOT NULL,
  hard_min REAL, hard_max REAL, soft_min REAL, soft_max REAL,
  required INTEGER NOT NULL, occasions INTEGER NOT NULL,
  scale_min INTEGER NOT NULL, scale_max INTEGER NOT NULL,
  categories TEXT NOT NULL,
  position INTEGER NOT NULL,
  UNIQUE (trial_id, code)
) STRICT;
CREATE TABLE this_device (
  only_row INTEGER PRIMARY KEY CHECK (only_row = 1),
  device_id TEXT NOT NULL
) STRICT;
CREATE TABLE observation (
  device_id TEXT NOT NULL,
  sequence INTEGER NOT NULL,
  plot_id INTEGER NOT NULL REFERENCES plot(id),
  trait_id INTEGER NOT NULL REFERENCES trait(id),
  occasion INTEGER NOT NULL CHECK (occasion >= 1),
  value TEXT, number REAL, missing_reason TEXT,
  note TEXT NOT NULL, observer TEXT NOT NULL, recorded_at TEXT NOT NULL,
  PRIMARY KEY (device_id, sequence),
  CHECK ((value IS NULL) <> (missing_reason IS NULL))
) STRICT, WITHOUT ROWID;
CREATE TABLE replacement (
  device_id TEXT NOT NULL, sequence INTEGER NOT NULL,
  replaced_device_id TEXT NOT NULL, replaced_sequence INTEGER NOT NULL,
  PRIMARY KEY (device_id, sequence, replaced_device_id, replaced_sequence),
  FOREIGN KEY (device_id, sequence) REFERENCES observation(device_id, sequence),
  FOREIGN KEY (replaced_device_id, replaced_sequence) REFERENCES observation(device_id, sequence)
) STRICT, WITHOUT ROWID;
CREATE INDEX replacement_replaced ON replacement(replaced_device_id, replaced_sequence);
CREATE INDEX observation_cell ON observation(trait_id, plot_id, occasion);
CREATE TRIGGER observation_no_update BEFORE UPDATE ON observation
  BEGIN SELECT RAISE(ABORT, 'the observation log is append-only'); END;
CREATE TRIGGER observation_no_delete BEFORE DELETE ON observation
  BEGIN SELECT RAISE(ABORT, 'the observation log is append-only'); END;
CREATE TRIGGER replacement_no_update BEFORE UPDATE ON replacement
  BEGIN SELECT RAISE(ABORT, 'the observation log is append-only'); END;
CREATE TRIGGER replacement_no_delete BEFORE DELETE ON replacement
  BEGIN SELECT RAISE(ABORT, 'the observation log is append-only'); END;
CREATE VIEW live_observation AS
  SELECT o.* FROM observation o
  WHERE NOT EXISTS (SELECT 1 FROM replacement r
                    WHERE r.replaced_device_id = o.device_id AND r.replaced_sequence = o.sequence);
CREATE VIEW current_value AS
  SELECT plot_id, trait_id, occasion, max(value) AS value, max(number) AS number,
         max(missing_reason) AS missing_reason, count(*) AS live_rows
  FROM live_observation GROUP BY plot_id, trait_id, occasion
  HAVING count(DISTINCT coalesce(value, '') || char(31) || coalesce(missing_reason, '')) = 1;
CREATE VIEW conflict AS
  SELECT plot_id, trait_id, occasion, count(*) AS live_rows
  FROM live_observation GROUP BY plot_id, trait_id, occasion
  HAVING count(DISTINCT coalesce(value, '') || char(31) || coalesce(missing_reason, '')) > 1;
)sql";

// Version 2: a trial's identity shared by every copy (uid), whether this file
// is the station's or a device's copy, what the station is known to hold
// (for bundles of what it has not seen) and the bundles already merged.
constexpr const char* kSchemaV2 = R"sql(
ALTER TABLE trial ADD COLUMN uid TEXT NOT NULL DEFAULT '';
ALTER TABLE trial ADD COLUMN role TEXT NOT NULL DEFAULT 'station' CHECK (role IN ('station', 'device'));
CREATE TABLE station_holding (
  device_id TEXT PRIMARY KEY,
  max_sequence INTEGER NOT NULL
) STRICT;
CREATE TABLE merged_bundle (
  checksum TEXT PRIMARY KEY,
  maker_device_id TEXT NOT NULL,
  first_merged_at TEXT NOT NULL,
  observations_added INTEGER NOT NULL,
  replacements_added INTEGER NOT NULL
) STRICT;
)sql";

// Version 3: which checks' questions the crew answered "the value is right"
// for (check keys, comma-separated: data, not words in a note), and this device's choice of today's walk (never
// bundled: each device walks its own).
constexpr const char* kSchemaV3 = R"sql(
ALTER TABLE observation ADD COLUMN confirmed_checks TEXT NOT NULL DEFAULT '';
CREATE TABLE walk_choice (
  only_row INTEGER PRIMARY KEY CHECK (only_row = 1),
  traits TEXT NOT NULL,
  occasion INTEGER NOT NULL CHECK (occasion >= 1),
  blocks TEXT NOT NULL,
  every_trait_per_plot INTEGER NOT NULL CHECK (every_trait_per_plot IN (0, 1))
) STRICT;
)sql";

// Version 4: live rows agree when their values agree as values (the number
// of a numeric trait), not as text: 5.5 and 5.50 are one value.
constexpr const char* kSchemaV4 = R"sql(
DROP VIEW current_value;
DROP VIEW conflict;
CREATE VIEW current_value AS
  SELECT plot_id, trait_id, occasion, max(value) AS value, max(number) AS number,
         max(missing_reason) AS missing_reason, count(*) AS live_rows
  FROM live_observation GROUP BY plot_id, trait_id, occasion
  HAVING count(DISTINCT CASE WHEN number IS NOT NULL THEN 'n' || quote(number)
                             WHEN value IS NOT NULL THEN 't' || value
                             ELSE 'm' || missing_reason END) = 1;
CREATE VIEW conflict AS
  SELECT plot_id, trait_id, occasion, count(*) AS live_rows
  FROM live_observation GROUP BY plot_id, trait_id, occasion
  HAVING count(DISTINCT CASE WHEN number IS NOT NULL THEN 'n' || quote(number)
                             WHEN value IS NOT NULL THEN 't' || value
                             ELSE 'm' || missing_reason END) > 1;
)sql";

// Version 5: this file's own signing key, and the keys it accepts bundles
// signed with (storage/enrolment.h).
constexpr const char* kSchemaV5 = R"sql(
CREATE TABLE signing_key (
  only_row INTEGER PRIMARY KEY CHECK (only_row = 1),
  public_key BLOB NOT NULL,
  secret_key BLOB NOT NULL,
  made_at TEXT NOT NULL
) STRICT;
CREATE TABLE enrolment (
  device_id TEXT PRIMARY KEY,
  role TEXT NOT NULL CHECK (role IN ('station', 'device')),
  public_key BLOB NOT NULL UNIQUE,
  label TEXT NOT NULL,
  enrolled_by TEXT NOT NULL,
  enrolled_at TEXT NOT NULL,
  revoked_at TEXT, revoked_by TEXT, revoked_reason TEXT,
  succeeds_device_id TEXT NOT NULL DEFAULT '',
  succeeds_up_to INTEGER NOT NULL DEFAULT 0
) STRICT;
)sql";

std::string random_hex(int bytes) {
  std::random_device rd;
  std::string out;
  char buf[4];
  for (int i = 0; i < bytes; ++i) {
    std::snprintf(buf, sizeof buf, "%02x", static_cast<unsigned>(rd() & 0xFF));
    out += buf;
  }
  return out;
}

std::string new_device_id() {
  std::random_device rd;
  const std::uint64_t v = (static_cast<std::uint64_t>(rd()) << 32) ^ rd();
  char buf[24];
  std::snprintf(buf, sizeof buf, "%016llx", static_cast<unsigned long long>(v));
  return buf;
}

const char* block_shape_key(BlockShape s) {
  return s == BlockShape::row_strips ? "row-strips" : s == BlockShape::column_strips ? "column-strips" : "rectangles";
}
BlockShape block_shape_from(const std::string& s) {
  return s == "column-strips" ? BlockShape::column_strips : s == "rectangles" ? BlockShape::rectangles
                                                                              : BlockShape::row_strips;
}
const char* walk_key(WalkOrder w) { return w == WalkOrder::serpentine_rows ? "serpentine-rows" : "serpentine-columns"; }

std::string join_categories(const std::vector<std::string>& c) {
  std::string s;
  for (const auto& x : c) s += (s.empty() ? "" : "\x1f") + x;
  return s;
}
std::vector<std::string> split_categories(const std::string& s) {
  std::vector<std::string> out;
  if (s.empty()) return out;
  std::string cur;
  for (char ch : s) {
    if (ch == '\x1f') { out.push_back(cur); cur.clear(); } else cur += ch;
  }
  out.push_back(cur);
  return out;
}

Status insert_trial(Database& db, const TrialPlan& p, const Layout& layout, const TrialIdentity& id) {
  auto st = db.prepare(
      "INSERT INTO trial (name, site, season, design, replicates, grid_rows, grid_columns, plot_length_m, "
      "plot_width_m, block_shape, block_rows, block_columns, walk, seed, sites, status, created_at, uid, role) "
      "VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?, 'collecting', ?, ?, ?)");
  if (!st) return st.problem();
  st->bind(1, p.name).bind(2, p.site).bind(3, p.season).bind(4, design_kind_key(p.design)).bind(5, p.replicates)
      .bind(6, p.rows).bind(7, p.columns).bind(8, p.plot_length_m).bind(9, p.plot_width_m)
      .bind(10, block_shape_key(p.block_shape)).bind(11, p.block_rows).bind(12, p.block_columns)
      .bind(13, walk_key(p.walk)).bind(14, std::to_string(p.seed)).bind(15, join_categories(p.sites))
      .bind(16, utc_now()).bind(17, id.uid.empty() ? random_hex(16) : id.uid).bind(18, id.role);
  FURROW_TRY(st->run());
  const std::int64_t trial_id = db.last_insert_rowid();
  std::vector<std::int64_t> factor_ids;
  std::vector<std::vector<std::int64_t>> level_ids;
  for (size_t f = 0; f < p.factors.size(); ++f) {
    auto fs = db.prepare("INSERT INTO factor (trial_id, name, position) VALUES (?,?,?)");
    if (!fs) return fs.problem();
    fs->bind(1, trial_id).bind(2, p.factors[f].name).bind(3, static_cast<int>(f));
    FURROW_TRY(fs->run());
    factor_ids.push_back(db.last_insert_rowid());
    level_ids.emplace_back();
    auto ls = db.prepare("INSERT INTO level (factor_id, label, position) VALUES (?,?,?)");
    if (!ls) return ls.problem();
    for (size_t l = 0; l < p.factors[f].levels.size(); ++l) {
      ls->reset();
      ls->bind(1, factor_ids.back()).bind(2, p.factors[f].levels[l]).bind(3, static_cast<int>(l));
      FURROW_TRY(ls->run());
      level_ids.back().push_back(db.last_insert_rowid());
    }
  }
  auto ps = db.prepare(
      "INSERT INTO plot (trial_id, label, site, block, field_row, field_column, walk_order) VALUES (?,?,?,?,?,?,?)");
  auto pl = db.prepare("INSERT INTO plot_level (plot_id, factor_id, level_id) VALUES (?,?,?)");
  if (!ps) return ps.problem();
  if (!pl) return pl.problem();
  for (const PlannedPlot& plot : layout.plots) {
    ps->reset();
    ps->bind(1, trial_id).bind(2, plot.label).bind(3, p.sites.empty() ? std::string() : p.sites[plot.site])
        .bind(4, plot.block).bind(5, plot.row).bind(6, plot.column).bind(7, plot.walk_order);
    FURROW_TRY(ps->run());
    const std::int64_t plot_id = db.last_insert_rowid();
    for (size_t f = 0; f < plot.levels.size(); ++f) {
      pl->reset();
      pl->bind(1, plot_id).bind(2, factor_ids[f]).bind(3, level_ids[f][plot.levels[f]]);
      FURROW_TRY(pl->run());
    }
  }
  auto ts = db.prepare(
      "INSERT INTO trait (trial_id, code, name, unit, kind, decimals, hard_min, hard_max, soft_min, soft_max, "
      "required, occasions, scale_min, scale_max, categories, position) VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)");
  if (!ts) return ts.problem();
  for (size_t k = 0; k < p.traits.size(); ++k) {
    const Trait& t = p.traits[k];
    ts->reset();
    ts->bind(1, trial_id).bind(2, t.code).bind(3, t.name).bind(4, t.unit).bind(5, trait_kind_key(t.kind))
        .bind(6, t.decimals).bind(7, t.hard_min).bind(8, t.hard_max).bind(9, t.soft_min).bind(10, t.soft_max)
        .bind(11, t.required ? 1 : 0).bind(12, t.occasions).bind(13, t.scale_min).bind(14, t.scale_max)
        .bind(15, join_categories(t.categories)).bind(16, static_cast<int>(k));
    FURROW_TRY(ts->run());
  }
  auto ds = db.prepare("INSERT INTO this_device (only_row, device_id) VALUES (1, ?)");
  if (!ds) return ds.problem();
  const std::string device_id = new_device_id();
  ds->bind(1, device_id);
  FURROW_TRY(ds->run());
  return make_own_key(db, device_id, id.role);
}

}  // namespace

Status close_trial(Database& db) {
  return in_transaction(db, [&]() -> Status {
    auto s = db.prepare("UPDATE trial SET status = 'closed', closed_at = ? WHERE status <> 'closed'");
    if (!s) return s.problem();
    s->bind(1, utc_now());
    FURROW_TRY(s->run());
    if (db.changes() == 0) return make_problem("the trial is closed already");
    return ok_status();
  });
}

std::string utc_now() {
  const auto now = std::chrono::system_clock::now();
  const std::time_t t = std::chrono::system_clock::to_time_t(now);
  const auto ms = std::chrono::duration_cast<std::chrono::milliseconds>(now.time_since_epoch()).count() % 1000;
  std::tm tm{};
  gmtime_r(&t, &tm);
  char buf[80];
  std::snprintf(buf, sizeof buf, "%04d-%02d-%02dT%02d:%02d:%02d.%03dZ", tm.tm_year + 1900, tm.tm_mon + 1, tm.tm_mday,
                tm.tm_hour, tm.tm_min, tm.tm_sec, static_cast<int>(ms));
  return buf;
}

Status migrate(Database& db) {
  auto v = db.prepare("PRAGMA user_version");
  if (!v) return v.problem();
  v->step();
  const std::int64_t version = v->integer(0);
  if (version > kSchemaVersion)
    return make_problem("this trial database was written by a newer Furrow (schema " + std::to_string(version) +
                        ", this one knows " + std::to_string(kSchemaVersion) + ")");
  if (version == kSchemaVersion) return ok_status();
  return in_transaction(db, [&]() -> Status {
    if (version < 1) {
      FURROW_TRY(db.exec(kSchemaV1));
      FURROW_TRY(db.exec("PRAGMA user_version = 1"));
    }
    if (version < 2) {
      FURROW_TRY(db.exec(kSchemaV2));
      auto u = db.prepare("UPDATE trial SET uid = ? WHERE uid = ''");
      if (!u) return u.problem();
      u->bind(1, random_hex(16));
      FURROW_TRY(u->run());
      FURROW_TRY(db.exec("PRAGMA user_version = 2"));
    }
    if (version < 3) {
      FURROW_TRY(db.exec(kSchemaV3));
      FURROW_TRY(db.exec("PRAGMA user_version = 3"));
    }
    if (version < 4) {
      FURROW_TRY(db.exec(kSchemaV4));
      FURROW_TRY(db.exec("PRAGMA user_version = 4"));
    }
    if (version < 5) {
      FURROW_TRY(db.exec(kSchemaV5));
      // A file made before keys gets its own now. A device's copy does not
      // know its station's key yet: the station manager enrols it again
      // (furrow device enrol) before bundles pass between them.
      auto t = db.prepare("SELECT d.device_id, t.role FROM trial t, this_device d");
      if (!t) return t.problem();
      if (t->step()) FURROW_TRY(make_own_key(db, t->text(0), t->text(1)));
      FURROW_TRY(db.exec("PRAGMA user_version = 5"));
    }
    return ok_status();
  });
}

namespace {

// The views and triggers of a new trial file of this schema.
const std::vector<std::tuple<std::string, std::string, std::string>>& own_views_and_triggers() {
  static const auto own = [] {
    std::vector<std::tuple<std::string, std::string, std::string>> out;
    auto db = Database::create_in_memory();
    if (!db || !migrate(*db)) return out;
    auto s = db->prepare("SELECT type, name, sql FROM sqlite_master WHERE type IN ('view', 'trigger') ORDER BY name");
    if (!s) return out;
    while (s->step()) out.emplace_back(s->text(0), s->text(1), s->text(2));
    return out;
  }();
  return own;
}

}  // namespace

Status create_trial_database(const std::string& path, const TrialPlan& plan, const Layout& layout,
                             const TrialIdentity& identity) {
  if (std::filesystem::exists(path)) return make_problem(path + " already exists; choose a new file name");
  Status result = [&]() -> Status {
    auto db = Database::open(path, true);
    if (!db) return db.problem();
    FURROW_TRY(migrate(*db));
    return in_transaction(*db, [&]() { return insert_trial(*db, plan, layout, identity); });
  }();
  if (!result) {
    std::error_code ec;
    for (const char* suffix : {"", "-wal", "-shm", "-journal"}) std::filesystem::remove(path + suffix, ec);
  }
  return result;
}

Result<OpenTrial> open_trial_database(const std::string& path, Access access) {
  if (!std::filesystem::exists(path)) return make_problem(path + " does not exist");
  if (std::filesystem::is_directory(path)) return make_problem(path + " is a folder, not a trial file");
  {
    // Looked at first without writing a byte: a file that is not a Furrow
    // trial (another program's database, a bundle) is refused untouched.
    // A disk with no room left fails even a read (SQLite needs its shared-
    // memory file beside the log): say so in those words.
    const auto why = [&](const std::string& message) {
      std::error_code ec;
      const auto space = std::filesystem::space(std::filesystem::absolute(path).parent_path(), ec);
      if (!ec && space.available < 64 * 1024)
        return make_problem(path + ": the disk is full (" + std::to_string(space.available / 1024) +
                            " KB free): nothing can be read or saved until space is freed");
      return make_problem(path + ": cannot be read: " + message);
    };
    // The file is never opened here except through SQLite: closing any other
    // handle on a database file drops the locks SQLite holds on it in this
    // process (POSIX advisory locks belong to the process), and another
    // program could then delete the log under the connections still open.
    // A signed bundle (not SQLite at all) is recognised once SQLite has
    // refused it, when no connection of ours can be on it.
    const auto bundle_or = [&](const std::string& message) {
      std::ifstream in(path, std::ios::binary);
      char head[16] = {};
      in.read(head, sizeof head);
      if (in.gcount() == sizeof head && std::string(head, sizeof head) == "FURROW BUNDLE 3\n")
        return make_problem(path + " is a bundle, not a trial database: merge it with furrow merge");
      return why(message);
    };
    auto probe = Database::open_looking(path);
    if (!probe) return bundle_or(probe.problem().message);
    auto kind = probe->prepare(
        "SELECT (SELECT application_id FROM pragma_application_id), (SELECT user_version FROM pragma_user_version), "
        "(SELECT count(*) FROM sqlite_master WHERE type = 'table' AND name IN ('trial', 'plot', 'observation'))");
    if (!kind) return bundle_or(kind.problem().message);
    if (!kind->step()) return bundle_or(kind->error());
    if (kind->integer(0) == kBundleApplicationIdForTrials)
      return make_problem(path + " is a bundle, not a trial database: merge it with furrow merge");
    if (kind->integer(1) < 1 || kind->integer(2) != 3)
      return make_problem(path + ": not a Furrow trial database (no trial, plots and log in it); it was left as it was");
  }
  Result<Database> db = make_problem("");
  if (access == Access::read_only) {
    // Nothing is written to the file, even when its schema is older: then
    // it is upgraded in a copy in memory.
    db = Database::open_looking(path);
    if (!db) return db.problem();
    auto v = db->prepare("PRAGMA user_version");
    if (!v) return make_problem(path + ": " + v.problem().message);
    if (v->step() && v->integer(0) < kSchemaVersion) {
      auto image = db->image();
      if (!image) return make_problem(path + ": " + image.problem().message);
      db = Database::open_image_copy(*image);
      if (!db) return make_problem(path + ": " + db.problem().message);
    }
  } else {
    db = Database::open(path, false);
    if (!db) return db.problem();
  }
  OpenTrial out{std::move(db).value(), {}};
  Database& d = out.db;
  if (auto s = migrate(d); !s) return make_problem(path + ": " + s.problem().message);
  {
    // A trial file may come from another tablet: its views and triggers must
    // be Furrow's own, word for word (an edited view could hide rows or run
    // without end), before any query uses them. (A file of this schema is
    // not written before this point.)
    auto objects = d.prepare("SELECT type, name, sql FROM sqlite_master WHERE type IN ('view', 'trigger') ORDER BY name");
    if (!objects) return make_problem(path + ": " + objects.problem().message);
    std::vector<std::tuple<std::string, std::string, std::string>> found;
    while (objects->step()) found.emplace_back(objects->text(0), objects->text(1), objects->text(2));
    if (objects->failed()) return make_problem(path + ": " + objects->error());
    if (found != own_views_and_triggers())
      return make_problem(path + ": its views or triggers are not Furrow's (the file was altered); nothing was read");
  }
  StoredTrial& t = out.trial;
  TrialPlan& p = t.plan;
  {
    auto s = d.prepare("SELECT id, name, site, season, design, replicates, grid_rows, grid_columns, plot_length_m, "
                       "plot_width_m, block_shape, block_rows, block_columns, walk, seed, status, created_at, sites, uid, role "
                       "FROM trial");
    if (!s) return s.problem();
    if (!s->step()) return make_problem(path + " holds no trial");
    t.id = s->integer(0);
    p.name = s->text(1);
    p.site = s->text(2);
    p.season = s->text(3);
    p.design = parse_design_kind(s->text(4)).value_or(DesignKind::randomised_complete_block);
    p.replicates = static_cast<int>(s->integer(5));
    p.rows = static_cast<int>(s->integer(6));
    p.columns = static_cast<int>(s->integer(7));
    p.plot_length_m = s->real(8);
    p.plot_width_m = s->real(9);
    p.block_shape = block_shape_from(s->text(10));
    p.block_rows = static_cast<int>(s->integer(11));
    p.block_columns = static_cast<int>(s->integer(12));
    p.walk = s->text(13) == "serpentine-columns" ? WalkOrder::serpentine_columns : WalkOrder::serpentine_rows;
    {
      const std::string seed = s->text(14);
      const auto [end, ec] = std::from_chars(seed.data(), seed.data() + seed.size(), p.seed);
      if (ec != std::errc() || end != seed.data() + seed.size() || seed.empty())
        return make_problem(path + ": the trial's seed '" + seed + "' is not a whole number (the file was altered or damaged)");
    }
    t.status = s->text(15);
    t.created_at = s->text(16);
    p.sites = split_categories(s->text(17));
    t.uid = s->text(18);
    t.role = s->text(19);
  }
  std::vector<std::int64_t> factor_ids;
  std::vector<std::vector<std::int64_t>> level_ids;
  {
    auto s = d.prepare("SELECT id, name FROM factor WHERE trial_id = ? ORDER BY position");
    if (!s) return s.problem();
    s->bind(1, t.id);
    while (s->step()) {
      factor_ids.push_back(s->integer(0));
      p.factors.push_back({s->text(1), {}});
    }
    for (size_t f = 0; f < factor_ids.size(); ++f) {
      auto l = d.prepare("SELECT id, label FROM level WHERE factor_id = ? ORDER BY position");
      if (!l) return l.problem();
      l->bind(1, factor_ids[f]);
      level_ids.emplace_back();
      while (l->step()) {
        level_ids.back().push_back(l->integer(0));
        p.factors[f].levels.push_back(l->text(1));
      }
    }
  }
  {
    auto s = d.prepare("SELECT id, label, block, field_row, field_column, walk_order, site FROM plot "
                       "WHERE trial_id = ? ORDER BY walk_order");
    auto lv = d.prepare("SELECT factor_id, level_id FROM plot_level WHERE plot_id = ?");
    if (!s) return s.problem();
    if (!lv) return lv.problem();
    // level id -> (factor position, level position)
    std::unordered_map<std::int64_t, std::pair<size_t, int>> level_position;
    for (size_t f = 0; f < level_ids.size(); ++f)
      for (size_t l = 0; l < level_ids[f].size(); ++l) level_position[level_ids[f][l]] = {f, static_cast<int>(l)};
    s->bind(1, t.id);
    while (s->step()) {
      PlannedPlot plot;
      t.plot_ids.push_back(s->integer(0));
      plot.label = s->text(1);
      plot.block = static_cast<int>(s->integer(2));
      plot.row = static_cast<int>(s->integer(3));
      plot.column = static_cast<int>(s->integer(4));
      plot.walk_order = static_cast<int>(s->integer(5));
      const std::string site = s->text(6);
      for (size_t k = 0; k < p.sites.size(); ++k)
        if (p.sites[k] == site) plot.site = static_cast<int>(k);
      plot.levels.assign(factor_ids.size(), 0);
      lv->reset();
      lv->bind(1, t.plot_ids.back());
      while (lv->step()) {
        const auto it = level_position.find(lv->integer(1));
        if (it != level_position.end()) plot.levels[it->second.first] = it->second.second;
      }
      t.layout.plots.push_back(std::move(plot));
    }
  }
  {
    auto s = d.prepare("SELECT id, code, name, unit, kind, decimals, hard_min, hard_max, soft_min, soft_max, required, "
                       "occasions, scale_min, scale_max, categories FROM trait WHERE trial_id = ? ORDER BY position");
    if (!s) return s.problem();
    s->bind(1, t.id);
    while (s->step()) {
      Trait tr;
      t.trait_ids.push_back(s->integer(0));
      tr.code = s->text(1);
      tr.name = s->text(2);
      tr.unit = s->text(3);
      tr.kind = parse_trait_kind(s->text(4)).value_or(TraitKind::text);
      tr.decimals = static_cast<int>(s->integer(5));
      tr.hard_min = s->optional_real(6);
      tr.hard_max = s->optional_real(7);
      tr.soft_min = s->optional_real(8);
      tr.soft_max = s->optional_real(9);
      tr.required = s->integer(10) != 0;
      tr.occasions = static_cast<int>(s->integer(11));
      tr.scale_min = static_cast<int>(s->integer(12));
      tr.scale_max = static_cast<int>(s->integer(13));
      tr.categories = split_categories(s->text(14));
      p.traits.push_back(std::move(tr));
    }
  }
  {
    auto s = d.prepare("SELECT device_id FROM this_device");
    if (!s) return s.problem();
    if (s->step()) t.device_id = s->text(0);
  }
  return out;
}

Result<ObservationKey> ObservationWriter::append(const std::string& device_id, const NewObservation& o,
                                                 const std::string& recorded_at) {
  auto prepare = [&](std::optional<Statement>& slot, const char* sql) -> Status {
    if (slot) { slot->reset(); return ok_status(); }
    auto st = db_.prepare(sql);
    if (!st) return st.problem();
    slot.emplace(std::move(st).value());
    return ok_status();
  };
  // The limits a bundle is checked against (bundle.h, R6): a row saved here
  // must merge at the station.
  if (o.observer.empty() || o.observer.size() > kMaxNameBytes)
    return make_problem("the observer's name must be 1 to " + std::to_string(kMaxNameBytes) + " bytes long (it is " +
                        std::to_string(o.observer.size()) + "); nothing was saved");
  if (o.note.size() > kMaxNoteBytes)
    return make_problem("the note is longer than " + std::to_string(kMaxNoteBytes) + " bytes (" +
                        std::to_string(o.note.size()) + "); shorten it; nothing was saved");
  if (o.missing_reason && (o.missing_reason->empty() || o.missing_reason->size() > kMaxReasonBytes))
    return make_problem("the reason for no value must be 1 to " + std::to_string(kMaxReasonBytes) + " bytes long (it is " +
                        std::to_string(o.missing_reason->size()) + "); nothing was saved");
  if (o.confirmed_checks.size() > kMaxNameBytes) return make_problem("too many confirmed checks; nothing was saved");
  if (has_control_character(o.observer) || has_control_character(o.note, true) ||
      has_control_character(o.missing_reason.value_or("")) || has_control_character(o.value.value_or("")))
    return make_problem("the text holds a control character (an escape, a bell, a NUL); nothing was saved");
  ObservationKey key{device_id, 0};
  auto status = in_transaction(db_, [&]() -> Status {
    FURROW_TRY(prepare(next_sequence_, "SELECT coalesce(max(sequence), 0) + 1 FROM observation WHERE device_id = ?"));
    next_sequence_->bind(1, device_id);
    if (!next_sequence_->step()) return make_problem(next_sequence_->error());
    key.sequence = next_sequence_->integer(0);
    next_sequence_->reset();   // finish the read before writing
    FURROW_TRY(prepare(insert_,
                       "INSERT INTO observation (device_id, sequence, plot_id, trait_id, occasion, value, number, "
                       "missing_reason, note, observer, recorded_at, confirmed_checks) VALUES (?,?,?,?,?,?,?,?,?,?,?,?)"));
    insert_->bind(1, device_id).bind(2, key.sequence).bind(3, o.plot_id).bind(4, o.trait_id).bind(5, o.occasion)
        .bind(6, o.value).bind(7, o.number).bind(8, o.missing_reason).bind(9, o.note).bind(10, o.observer)
        .bind(11, recorded_at).bind(12, o.confirmed_checks);
    FURROW_TRY(insert_->run());
    for (const ObservationKey& r : o.replaces) {
      FURROW_TRY(prepare(replace_, "INSERT INTO replacement VALUES (?,?,?,?)"));
      replace_->bind(1, device_id).bind(2, key.sequence).bind(3, r.device_id).bind(4, r.sequence);
      FURROW_TRY(replace_->run());
    }
    return ok_status();
  });
  // Statements must not hold the database open between entries.
  for (auto* st : {&next_sequence_, &insert_, &replace_})
    if (*st) (*st)->reset();
  if (!status) return status.problem();
  return key;
}

Result<ObservationKey> append_observation(Database& db, const std::string& device_id, const NewObservation& o,
                                          const std::string& recorded_at) {
  ObservationWriter writer(db);
  return writer.append(device_id, o, recorded_at);
}

namespace {
template <class Bind>
Result<std::vector<LiveObservation>> read_observations(Database& db, const std::string& sql, Bind bind) {
  auto s = db.prepare(sql);
  if (!s) return s.problem();
  bind(*s);
  std::vector<LiveObservation> out;
  while (s->step()) {
    LiveObservation o;
    o.key = {s->text(0), s->integer(1)};
    o.plot_id = s->integer(2);
    o.trait_id = s->integer(3);
    o.occasion = static_cast<int>(s->integer(4));
    o.value = s->optional_text(5);
    o.number = s->optional_real(6);
    o.missing_reason = s->optional_text(7);
    o.note = s->text(8);
    o.observer = s->text(9);
    o.recorded_at = s->text(10);
    o.confirmed_checks = s->text(11);
    out.push_back(std::move(o));
  }
  if (s->failed()) return make_problem(s->error());
  return out;
}
constexpr const char* kColumns =
    "device_id, sequence, plot_id, trait_id, occasion, value, number, missing_reason, note, observer, recorded_at, "
    "confirmed_checks";
}  // namespace

Result<std::vector<LiveObservation>> live_observations(Database& db, std::int64_t trait_id) {
  return read_observations(db,
                           std::string("SELECT ") + kColumns + " FROM live_observation" +
                               (trait_id ? " WHERE trait_id = ?" : "") + " ORDER BY recorded_at, device_id, sequence",
                           [&](Statement& st) {
                             if (trait_id) st.bind(1, trait_id);
                           });
}

Result<std::vector<LiveObservation>> replaced_by(Database& db, const ObservationKey& key) {
  return read_observations(db,
                           std::string("SELECT ") + kColumns +
                               " FROM observation WHERE (device_id, sequence) IN (SELECT replaced_device_id, "
                               "replaced_sequence FROM replacement WHERE device_id = ? AND sequence = ?) "
                               "ORDER BY recorded_at, device_id, sequence",
                           [&](Statement& st) { st.bind(1, key.device_id).bind(2, key.sequence); });
}

Result<std::vector<LiveObservation>> all_observations(Database& db) {
  return read_observations(db, std::string("SELECT ") + kColumns + " FROM observation ORDER BY device_id, sequence",
                           [](Statement&) {});
}

}  // namespace furrow

namespace furrow {

namespace {
std::string join_with(const std::vector<std::string>& items, char sep) {
  std::string s;
  for (const auto& x : items) s += (s.empty() ? "" : std::string(1, sep)) + x;
  return s;
}
std::vector<std::string> split_on(const std::string& s, char sep) {
  std::vector<std::string> out;
  if (s.empty()) return out;
  std::string cur;
  for (char ch : s) {
    if (ch == sep) { out.push_back(cur); cur.clear(); } else cur += ch;
  }
  out.push_back(cur);
  return out;
}
}  // namespace

Result<WalkChoice> load_walk_choice(Database& db) {
  auto s = db.prepare("SELECT traits, occasion, blocks, every_trait_per_plot FROM walk_choice");
  if (!s) return s.problem();
  WalkChoice w;
  if (!s->step()) {
    if (s->failed()) return make_problem(s->error());
    return w;
  }
  w.trait_codes = split_on(s->text(0), '\x1f');
  w.occasion = static_cast<int>(s->integer(1));
  for (const std::string& b : split_on(s->text(2), ',')) w.blocks.push_back(std::atoi(b.c_str()));
  w.every_trait_per_plot = s->integer(3) != 0;
  return w;
}

Status save_walk_choice(Database& db, const WalkChoice& w) {
  std::vector<std::string> blocks;
  for (int b : w.blocks) blocks.push_back(std::to_string(b));
  auto s = db.prepare("INSERT OR REPLACE INTO walk_choice VALUES (1, ?, ?, ?, ?)");
  if (!s) return s.problem();
  s->bind(1, join_with(w.trait_codes, '\x1f')).bind(2, w.occasion).bind(3, join_with(blocks, ','))
      .bind(4, w.every_trait_per_plot ? 1 : 0);
  return s->run();
}

}  // namespace furrow

namespace furrow {
bool has_check(const std::string& checks, const std::string& key) {
  size_t start = 0;
  while (start <= checks.size()) {
    const size_t end = std::min(checks.find(',', start), checks.size());
    if (checks.compare(start, end - start, key) == 0 && end - start == key.size()) return true;
    start = end + 1;
  }
  return false;
}
}  // namespace furrow

namespace furrow {
bool has_control_character(const std::string& text, bool line_breaks_allowed) {
  for (char ch : text) {
    const unsigned char c = static_cast<unsigned char>(ch);
    if (line_breaks_allowed && (c == '\n' || c == '\t' || c == '\r')) continue;
    if (c < 0x20 || c == 0x7F) return true;
  }
  return false;
}

std::string value_identity(const LiveObservation& row) {
  if (row.number) {
    char buf[40];
    std::snprintf(buf, sizeof buf, "n%.17g", *row.number);
    return buf;
  }
  if (row.value) return "t" + *row.value;
  return "m" + row.missing_reason.value_or("");
}
}  // namespace furrow
