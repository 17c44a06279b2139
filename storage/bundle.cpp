#include "storage/bundle.h"

#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <map>
#include <set>
#include <algorithm>
#include <tuple>
#include <optional>

#include "core/design.h"
#include "core/entry_checks.h"
#include "storage/enrolment.h"
#include "storage/keys.h"
#include "storage/text_file.h"

namespace furrow {
namespace {

constexpr std::int64_t kBundleApplicationId = 0x46524231;   // "FRB1"
constexpr const char* kFormat = "furrow-bundle";
constexpr const char* kVersion = "3";   // 2: rows carry `confirmed_checks`; 3: signed

// The signed file (see bundle.h): magic, signer's key, signature, image length, image.
constexpr char kMagic[17] = "FURROW BUNDLE 3\n";
constexpr size_t kKeyAt = 16, kSignatureAt = 48, kLengthAt = 112, kImageAt = 120;
// A whole season of a large programme (10^6 rows) is about 100 MB.
constexpr std::uintmax_t kMaxBundleBytes = std::uintmax_t{256} << 20;

// BLAKE2b over length-prefixed fields, so that no two different sequences of
// fields give the same stream.
class Digest {
 public:
  void field(const std::string& s) {
    const std::string head = std::to_string(s.size()) + ":";
    h_.update(head);
    h_.update(s);
  }
  void field(const std::optional<std::string>& s) {
    if (s) field(*s);
    else h_.update("~");
  }
  void field(std::int64_t v) { field(std::to_string(v)); }
  void field(const std::optional<double>& v) {
    if (!v) {
      h_.update("~");
      return;
    }
    char buf[40];
    std::snprintf(buf, sizeof buf, "%.17g", *v);
    field(std::string(buf));
  }
  void end_row() { h_.update("\n"); }
  std::string hex() { return h_.hex(); }

 private:
  Hasher h_;
};

std::string opt_key(const std::optional<double>& v) {
  if (!v) return "~";
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.17g", *v);
  return buf;
}

// One log row as bundles carry it (plots and traits by label and code).
struct Row {
  std::string device_id;
  std::int64_t sequence = 0;
  std::string plot_label, trait_code;
  std::int64_t occasion = 1;
  std::optional<std::string> value;
  std::optional<double> number;
  std::optional<std::string> missing_reason;
  std::string note, observer, recorded_at;
  std::string confirmed_checks;
  bool operator==(const Row& o) const {
    return device_id == o.device_id && sequence == o.sequence && plot_label == o.plot_label &&
           trait_code == o.trait_code && occasion == o.occasion && value == o.value &&
           opt_key(number) == opt_key(o.number) && missing_reason == o.missing_reason && note == o.note &&
           observer == o.observer && recorded_at == o.recorded_at && confirmed_checks == o.confirmed_checks;
  }
};
struct Link {
  std::string device_id;
  std::int64_t sequence = 0;
  std::string replaced_device_id;
  std::int64_t replaced_sequence = 0;
};

const char* kManifestKeys[] = {"format",          "version",    "trial_uid",    "trial_name",   "plan_hash",
                               "maker_device_id", "maker_role", "created_at",   "observations", "replacements"};

std::map<std::string, std::string> manifest_fields(const BundleManifest& m) {
  return {{"format", kFormat},
          {"version", kVersion},
          {"trial_uid", m.trial_uid},
          {"trial_name", m.trial_name},
          {"plan_hash", m.plan_hash},
          {"maker_device_id", m.maker_device_id},
          {"maker_role", m.maker_role},
          {"created_at", m.created_at},
          {"observations", std::to_string(m.observations)},
          {"replacements", std::to_string(m.replacements)}};
}

// Every device's contiguous prefix of sequence numbers held in `db`.
Result<std::map<std::string, std::int64_t>> holdings(Database& db) {
  // Per device: rows 1..n are all held when the largest sequence is the
  // count (the usual case, read from the key's index); else the prefix is
  // found by walking that device's sequences.
  auto s = db.prepare("SELECT device_id, max(sequence), count(*) FROM observation GROUP BY device_id");
  if (!s) return s.problem();
  std::map<std::string, std::int64_t> out;
  std::vector<std::string> gapped;
  while (s->step()) {
    if (s->integer(1) == s->integer(2)) out[s->text(0)] = s->integer(1);
    else gapped.push_back(s->text(0));
  }
  if (s->failed()) return make_problem(s->error());
  auto walk = db.prepare("SELECT sequence FROM observation WHERE device_id = ? ORDER BY sequence");
  if (!walk) return walk.problem();
  for (const std::string& device : gapped) {
    walk->reset();
    walk->bind(1, device);
    std::int64_t next = 1;
    while (walk->step() && walk->integer(0) == next) ++next;
    if (next > 1) out[device] = next - 1;
  }
  return out;
}

const char* kRowColumns =
    "o.device_id, o.sequence, p.label, t.code, o.occasion, o.value, o.number, o.missing_reason, o.note, o.observer, "
    "o.recorded_at, o.confirmed_checks";

Row read_row(const Statement& s) {
  Row r;
  r.device_id = s.text(0);
  r.sequence = s.integer(1);
  r.plot_label = s.text(2);
  r.trait_code = s.text(3);
  r.occasion = s.integer(4);
  r.value = s.optional_text(5);
  r.number = s.optional_real(6);
  r.missing_reason = s.optional_text(7);
  r.note = s.text(8);
  r.observer = s.text(9);
  r.recorded_at = s.text(10);
  r.confirmed_checks = s.text(11);
  return r;
}

const char* kBundleSchema = R"sql(
CREATE TABLE manifest (key TEXT PRIMARY KEY, value TEXT NOT NULL) STRICT;
CREATE TABLE observation (
  device_id TEXT NOT NULL, sequence INTEGER NOT NULL,
  plot_label TEXT NOT NULL, trait_code TEXT NOT NULL, occasion INTEGER NOT NULL,
  value TEXT, number REAL, missing_reason TEXT,
  note TEXT NOT NULL, observer TEXT NOT NULL, recorded_at TEXT NOT NULL,
  confirmed_checks TEXT NOT NULL,
  PRIMARY KEY (device_id, sequence)
) STRICT, WITHOUT ROWID;
CREATE TABLE replacement (
  device_id TEXT NOT NULL, sequence INTEGER NOT NULL,
  replaced_device_id TEXT NOT NULL, replaced_sequence INTEGER NOT NULL,
  PRIMARY KEY (device_id, sequence, replaced_device_id, replaced_sequence)
) STRICT, WITHOUT ROWID;
CREATE TABLE holding (device_id TEXT PRIMARY KEY, max_sequence INTEGER NOT NULL) STRICT;
)sql";

// The bundle's schema, exactly: the objects (type, name, table, SQL) an empty
// bundle made by kBundleSchema holds. Anything else - a view, a trigger, a
// virtual table, an extra column or index - and the file is not read further.
using SchemaObjects = std::vector<std::tuple<std::string, std::string, std::string, std::string>>;
Result<SchemaObjects> schema_objects(Database& db) {
  auto s = db.prepare("SELECT type, name, tbl_name, coalesce(sql, '') FROM sqlite_master ORDER BY type, name");
  if (!s) return s.problem();
  SchemaObjects out;
  while (s->step()) out.emplace_back(s->text(0), s->text(1), s->text(2), s->text(3));
  if (s->failed()) return make_problem(s->error());
  return out;
}
const SchemaObjects& expected_bundle_schema() {
  static const SchemaObjects expected = [] {
    auto db = Database::create_standalone(":memory:");
    SchemaObjects out;
    if (db && db->exec(kBundleSchema)) {
      auto objects = schema_objects(*db);
      if (objects) out = *objects;
    }
    return out;
  }();
  return expected;
}

// A bundle file read whole, its signature checked against the key it
// names (so its bytes are as its signer wrote them; whether that signer may
// write here is for the caller to decide).
struct SignedFile {
  std::string bytes;
  std::string signer_key;   // 32 bytes
  std::string file_hash;    // BLAKE2b-256 of every byte, hex
  std::string_view image() const { return std::string_view(bytes).substr(kImageAt); }
};

Result<SignedFile> read_signed_file(const std::string& path) {
  const auto fail = [&](const std::string& why) { return make_problem(path + ": " + why); };
  std::error_code ec;
  if (!std::filesystem::exists(path, ec)) return fail("cannot be read: no such file");
  if (!std::filesystem::is_regular_file(path, ec)) return fail("not a Furrow bundle (not a plain file)");
  const auto size = std::filesystem::file_size(path, ec);
  if (ec) return fail("cannot be read (" + ec.message() + ")");
  if (size > kMaxBundleBytes)
    return fail("refused: " + std::to_string(size >> 20) + " MB is more than a bundle may hold (" +
                std::to_string(kMaxBundleBytes >> 20) + " MB)");
  SignedFile f;
  {
    std::ifstream in(path, std::ios::binary);
    if (!in) return fail("cannot be read");
    f.bytes.resize(static_cast<size_t>(size));
    in.read(f.bytes.data(), static_cast<std::streamsize>(size));
    if (static_cast<std::uintmax_t>(in.gcount()) != size) return fail("cannot be read whole (it changed while read?)");
  }
  if (f.bytes.compare(0, 16, std::string("SQLite format 3\0", 16)) == 0)
    return fail("not a signed Furrow bundle (an SQLite file: a bundle of an older Furrow, or another program's "
                "file); bundles are signed since version 3: write it again with this Furrow");
  if (f.bytes.size() < kImageAt + 100 || f.bytes.compare(0, kKeyAt, kMagic) != 0)
    return fail("not a Furrow bundle");
  std::uint64_t length = 0;
  for (int i = 7; i >= 0; --i) length = (length << 8) | static_cast<unsigned char>(f.bytes[kLengthAt + i]);
  if (length != f.bytes.size() - kImageAt)
    return fail("truncated or extended: it says it holds " + std::to_string(length) + " bytes of data, it holds " +
                std::to_string(f.bytes.size() - kImageAt));
  f.signer_key = f.bytes.substr(kKeyAt, kPublicKeyBytes);
  const std::string_view all(f.bytes);
  if (!verify_parts(f.signer_key, all.substr(kSignatureAt, kSignatureBytes),
                    {all.substr(0, kSignatureAt), all.substr(kLengthAt)}))
    return fail("refused: its signature does not match its content (altered or damaged since it was signed)");
  f.file_hash = hash_hex(all);
  return f;
}

// The file a bundle's image becomes: signed by `key`.
std::string seal(std::string_view image, const KeyPair& key) {
  std::string head(kImageAt, '\0');
  std::memcpy(head.data(), kMagic, kKeyAt);
  std::memcpy(head.data() + kKeyAt, key.public_key.data(), kPublicKeyBytes);
  std::uint64_t length = image.size();
  for (size_t i = 0; i < 8; ++i) head[kLengthAt + i] = static_cast<char>((length >> (8 * i)) & 0xFF);
  const std::string_view h(head);
  const std::string signature = sign_parts(key.secret_key, {h.substr(0, kSignatureAt), h.substr(kLengthAt), image});
  std::memcpy(head.data() + kSignatureAt, signature.data(), kSignatureBytes);
  std::string out;
  out.reserve(head.size() + image.size());
  out += head;
  out += image;
  return out;
}

// An open bundle whose format and integrity have been checked.
struct OpenBundle {
  Database db;
  BundleManifest manifest;
  std::map<std::string, std::int64_t> holding;
};

Result<OpenBundle> open_bundle(const std::string& path, const SignedFile& file) {
  const auto fail = [&](const std::string& why) { return make_problem(path + ": " + why); };
  auto db = Database::open_untrusted_image(std::string(file.image()));
  if (!db) return fail("damaged or not a bundle: " + db.problem().message);
  OpenBundle b{std::move(db).value(), {}, {}};
  {
    auto s = b.db.prepare("PRAGMA application_id");
    if (!s) return fail("damaged or not a bundle: " + s.problem().message);
    if (!s->step() || s->integer(0) != kBundleApplicationId) return fail("not a Furrow bundle (another kind of SQLite file)");
  }
  {
    // Before any query of its tables: the schema must be ours, exactly.
    auto objects = schema_objects(b.db);
    if (!objects) return fail("damaged or not a bundle: " + objects.problem().message);
    const SchemaObjects& expected = expected_bundle_schema();
    if (expected.empty()) return fail("cannot check its schema (no memory for the expected one)");
    if (*objects != expected) {
      for (const auto& [type, name, table, sql] : *objects)
        if (type != "table" && type != "index")
          return fail("refused: it holds a " + type + " ('" + name + "'); a bundle holds tables only");
      return fail("refused: its tables are not those of a Furrow bundle (changed or extra tables, columns or indexes)");
    }
  }
  {
    auto s = b.db.prepare("PRAGMA quick_check");
    if (!s) return fail("damaged: " + s.problem().message);
    if (!s->step() || s->text(0) != "ok") return fail("damaged or truncated (the SQLite integrity check failed)");
  }
  std::map<std::string, std::string> m;
  {
    auto s = b.db.prepare("SELECT key, value FROM manifest");
    if (!s) return fail("damaged or truncated: " + s.problem().message);
    while (s->step()) m[s->text(0)] = s->text(1);
    if (s->failed()) return fail("damaged or truncated: " + s->error());
  }
  if (m["format"] != kFormat) return fail("not a Furrow bundle (no bundle manifest)");
  if (m["version"] != kVersion) return fail("bundle version " + m["version"] + " is not one this Furrow reads");
  for (const char* k : kManifestKeys)
    if (!m.count(k)) return fail(std::string("the manifest has no '") + k + "'");
  if (m.size() != std::size(kManifestKeys)) return fail("refused: its manifest holds entries a bundle does not have");
  BundleManifest& man = b.manifest;
  man.trial_uid = m["trial_uid"];
  man.trial_name = m["trial_name"];
  man.plan_hash = m["plan_hash"];
  man.maker_device_id = m["maker_device_id"];
  man.maker_role = m["maker_role"];
  man.created_at = m["created_at"];
  man.file_hash = file.file_hash;
  man.signer_key = file.signer_key;
  for (const char* key : {"observations", "replacements"}) {
    const std::string& v = m[key];
    if (v.empty() || v.size() > 12 || v.find_first_not_of("0123456789") != std::string::npos)
      return fail(std::string("the manifest's ") + key + " count '" + v + "' is not a plain number");
  }
  man.observations = std::stoll(m["observations"]);
  man.replacements = std::stoll(m["replacements"]);
  {
    auto s = b.db.prepare("SELECT device_id, max_sequence FROM holding ORDER BY device_id");
    if (!s) return fail("damaged or truncated: " + s.problem().message);
    while (s->step()) b.holding[s->text(0)] = s->integer(1);
    if (s->failed()) return fail("damaged or truncated: " + s->error());
  }
  return b;
}

// The counts a manifest gives must be what the file holds.
Status check_counts(const BundleManifest& m, std::int64_t rows, std::int64_t links) {
  if (rows != m.observations || links != m.replacements)
    return make_problem("holds " + std::to_string(rows) + " observations and " + std::to_string(links) +
                        " links but its manifest says " + std::to_string(m.observations) + " and " +
                        std::to_string(m.replacements) + " (truncated or altered)");
  return ok_status();
}

}  // namespace

std::string plan_hash(const StoredTrial& t) {
  Digest d;
  const TrialPlan& p = t.plan;
  d.field(p.name);
  d.field(std::string(design_kind_key(p.design)));
  for (std::int64_t v : {std::int64_t{p.replicates}, std::int64_t{p.rows}, std::int64_t{p.columns}}) d.field(v);
  d.end_row();
  for (const auto& s : p.sites) d.field(s);
  d.end_row();
  for (const auto& f : p.factors) {
    d.field(f.name);
    for (const auto& l : f.levels) d.field(l);
    d.end_row();
  }
  for (const Trait& tr : p.traits) {
    d.field(tr.code);
    d.field(tr.name);
    d.field(tr.unit);
    d.field(std::string(trait_kind_key(tr.kind)));
    d.field(std::int64_t{tr.decimals});
    for (const auto& v : {tr.hard_min, tr.hard_max, tr.soft_min, tr.soft_max}) d.field(v);
    for (std::int64_t v : {std::int64_t{tr.required}, std::int64_t{tr.occasions}, std::int64_t{tr.scale_min},
                           std::int64_t{tr.scale_max}})
      d.field(v);
    for (const auto& c : tr.categories) d.field(c);
    d.end_row();
  }
  for (const PlannedPlot& pl : t.layout.plots) {
    d.field(pl.label);
    for (std::int64_t v : {std::int64_t{pl.site}, std::int64_t{pl.block}, std::int64_t{pl.row}, std::int64_t{pl.column},
                           std::int64_t{pl.walk_order}})
      d.field(v);
    for (int l : pl.levels) d.field(std::int64_t{l});
    d.end_row();
  }
  return d.hex();
}

namespace {

bool is_device_id(const std::string& s);

// The bundle's bytes: the rows `anchor` chooses (a query of (device_id,
// sequence) pairs over `observation o`), every row those replace
// (recursively), and their links, signed with the file's own key. `name`
// names the bundle in messages.
Result<std::pair<BundleManifest, std::string>> build_bundle(Database& db, const StoredTrial& trial,
                                                            const std::string& anchor, const std::string& out_path) {
  const std::string selection = "WITH RECURSIVE sel(device_id, sequence) AS (SELECT * FROM (" + anchor +
                                ") UNION SELECT r.replaced_device_id, r.replaced_sequence FROM replacement r "
                                "JOIN sel ON r.device_id = sel.device_id AND r.sequence = sel.sequence) ";
  std::vector<Row> rows;
  std::vector<Link> links;
  {
    auto s = db.prepare(selection + "SELECT " + kRowColumns +
                        " FROM observation o JOIN sel ON o.device_id = sel.device_id AND o.sequence = sel.sequence "
                        "JOIN plot p ON p.id = o.plot_id JOIN trait t ON t.id = o.trait_id "
                        "ORDER BY o.device_id, o.sequence");
    if (!s) return s.problem();
    while (s->step()) rows.push_back(read_row(*s));
    if (s->failed()) return make_problem(s->error());
  }
  {
    auto s = db.prepare(selection +
                        "SELECT r.device_id, r.sequence, r.replaced_device_id, r.replaced_sequence FROM replacement r "
                        "JOIN sel ON r.device_id = sel.device_id AND r.sequence = sel.sequence "
                        "ORDER BY r.device_id, r.sequence, r.replaced_device_id, r.replaced_sequence");
    if (!s) return s.problem();
    while (s->step()) links.push_back({s->text(0), s->integer(1), s->text(2), s->integer(3)});
    if (s->failed()) return make_problem(s->error());
  }
  auto held = holdings(db);
  if (!held) return held.problem();

  auto key = own_key(db);
  if (!key) return make_problem(out_path + ": cannot sign the bundle: " + key.problem().message);

  BundleManifest m;
  m.trial_uid = trial.uid;
  m.trial_name = trial.plan.name;
  m.plan_hash = plan_hash(trial);
  m.maker_device_id = trial.device_id;
  m.maker_role = trial.role;
  m.created_at = utc_now();
  m.observations = static_cast<std::int64_t>(rows.size());
  m.replacements = static_cast<std::int64_t>(links.size());
  m.signer_key = key->public_key;
  const auto fields = manifest_fields(m);

  auto b = Database::create_in_memory();
  if (!b) return make_problem(out_path + ": " + b.problem().message);
  Status built = [&]() -> Status {
    FURROW_TRY(b->exec("PRAGMA application_id = " + std::to_string(kBundleApplicationId)));
    FURROW_TRY(b->exec(kBundleSchema));
    return in_transaction(*b, [&]() -> Status {
      auto ms = b->prepare("INSERT INTO manifest (key, value) VALUES (?, ?)");
      if (!ms) return ms.problem();
      for (const auto& [k, v] : fields) {
        ms->reset();
        ms->bind(1, k).bind(2, v);
        FURROW_TRY(ms->run());
      }
      auto hs = b->prepare("INSERT INTO holding (device_id, max_sequence) VALUES (?, ?)");
      if (!hs) return hs.problem();
      for (const auto& [dev, n] : *held) {
        hs->reset();
        hs->bind(1, dev).bind(2, n);
        FURROW_TRY(hs->run());
      }
      auto os = b->prepare("INSERT INTO observation VALUES (?,?,?,?,?,?,?,?,?,?,?,?)");
      if (!os) return os.problem();
      for (const Row& r : rows) {
        os->reset();
        os->bind(1, r.device_id).bind(2, r.sequence).bind(3, r.plot_label).bind(4, r.trait_code).bind(5, r.occasion)
            .bind(6, r.value).bind(7, r.number).bind(8, r.missing_reason).bind(9, r.note).bind(10, r.observer)
            .bind(11, r.recorded_at).bind(12, r.confirmed_checks);
        FURROW_TRY(os->run());
      }
      auto ls = b->prepare("INSERT INTO replacement VALUES (?,?,?,?)");
      if (!ls) return ls.problem();
      for (const Link& l : links) {
        ls->reset();
        ls->bind(1, l.device_id).bind(2, l.sequence).bind(3, l.replaced_device_id).bind(4, l.replaced_sequence);
        FURROW_TRY(ls->run());
      }
      return ok_status();
    });
  }();
  if (!built) return make_problem(out_path + ": " + built.problem().message);
  auto image = b->image();
  if (!image) return make_problem(out_path + ": " + image.problem().message);
  std::string file = seal(*image, *key);
  m.file_hash = hash_hex(file);
  return std::pair{m, std::move(file)};
}

}  // namespace

Result<BundleManifest> write_bundle(Database& db, const StoredTrial& trial, const std::string& out_path,
                                    bool everything) {
  everything = everything || trial.role == "station";
  // Rows the station is not known to hold (and, in build_bundle, every row those replace).
  const std::string anchor = std::string("SELECT o.device_id, o.sequence FROM observation o ") +
                             (everything ? "" :
                                         "WHERE NOT EXISTS (SELECT 1 FROM station_holding h WHERE h.device_id = o.device_id "
                                         "AND h.max_sequence >= o.sequence)");
  auto built = build_bundle(db, trial, anchor, out_path);
  if (!built) return built.problem();
  if (auto w = write_text_file(out_path, built->second); !w) return w.problem();
  return built->first;
}

Result<std::pair<BundleManifest, std::string>> bundle_for_sync(Database& db, const StoredTrial& trial,
                                                               const BundleSelection& sel) {
  FURROW_TRY(db.exec("CREATE TEMP TABLE IF NOT EXISTS sync_holds (device_id TEXT PRIMARY KEY, n INTEGER NOT NULL)"));
  FURROW_TRY(db.exec("DELETE FROM temp.sync_holds"));
  {
    auto ins = db.prepare("INSERT INTO temp.sync_holds VALUES (?, ?)");
    if (!ins) return ins.problem();
    for (const auto& [dev, n] : sel.receiver_holds) {
      ins->reset();
      ins->bind(1, dev).bind(2, n);
      FURROW_TRY(ins->run());
    }
  }
  // Device ids are checked hex (is_device_id) wherever they enter a file.
  std::string anchor;
  if (sel.makers_rows_only) {
    // The maker's own rows after those the receiver holds: a range of the key.
    const auto held = sel.receiver_holds.find(trial.device_id);
    anchor = "SELECT o.device_id, o.sequence FROM observation o WHERE o.device_id = '" + trial.device_id +
             "' AND o.sequence > " + std::to_string(held == sel.receiver_holds.end() ? 0 : held->second) +
             " ORDER BY o.sequence";
  } else {
    anchor = "SELECT o.device_id, o.sequence FROM observation o WHERE NOT EXISTS (SELECT 1 FROM "
             "temp.sync_holds h WHERE h.device_id = o.device_id AND h.n >= o.sequence) ORDER BY o.device_id, o.sequence";
  }
  if (sel.max_rows > 0) anchor += " LIMIT " + std::to_string(sel.max_rows);
  return build_bundle(db, trial, anchor, "the sync bundle");
}

Result<std::map<std::string, std::int64_t>> held_without_gap(Database& db) { return holdings(db); }

Result<std::string> rows_digest(Database& db, const std::string& device_id, std::int64_t upto) {
  Hasher h;
  auto s = db.prepare(std::string("SELECT ") + kRowColumns +
                      " FROM observation o JOIN plot p ON p.id = o.plot_id JOIN trait t ON t.id = o.trait_id "
                      "WHERE o.device_id = ? AND o.sequence <= ? ORDER BY o.sequence");
  if (!s) return s.problem();
  s->bind(1, device_id).bind(2, upto);
  std::int64_t n = 0;
  while (s->step()) {
    const Row r = read_row(*s);
    ++n;
    // Each field with its length first: no two rows read alike.
    for (const std::string& f : {r.plot_label, r.trait_code, std::to_string(r.sequence), std::to_string(r.occasion),
                                 r.value.value_or("\x01"), opt_key(r.number), r.missing_reason.value_or("\x01"), r.note,
                                 r.observer, r.recorded_at, r.confirmed_checks}) {
      h.update(std::to_string(f.size()) + ":");
      h.update(f);
    }
  }
  if (s->failed()) return make_problem(s->error());
  auto l = db.prepare("SELECT sequence, replaced_device_id, replaced_sequence FROM replacement WHERE device_id = ? "
                      "AND sequence <= ? ORDER BY 1, 2, 3");
  if (!l) return l.problem();
  l->bind(1, device_id).bind(2, upto);
  while (l->step()) h.update("r" + std::to_string(l->integer(0)) + "|" + l->text(1) + "|" + std::to_string(l->integer(2)) + ";");
  if (n != upto) return std::string("incomplete:") + std::to_string(n);
  return h.hex();
}

Status learn_station_holdings(Database& db, const std::map<std::string, std::int64_t>& held) {
  return in_transaction(db, [&]() -> Status {
    auto h = db.prepare("INSERT INTO station_holding (device_id, max_sequence) VALUES (?, ?) "
                        "ON CONFLICT (device_id) DO UPDATE SET max_sequence = max(max_sequence, excluded.max_sequence)");
    if (!h) return h.problem();
    for (const auto& [dev, n] : held) {
      if (!is_device_id(dev) || n < 0) return make_problem("the station named a device id that is not one Furrow makes");
      h->reset();
      h->bind(1, dev).bind(2, n);
      FURROW_TRY(h->run());
    }
    return ok_status();
  });
}

Result<BundleManifest> read_bundle_manifest(const std::string& path) {
  auto file = read_signed_file(path);
  if (!file) return file.problem();
  auto b = open_bundle(path, *file);
  if (!b) return b.problem();
  auto n = b->db.prepare("SELECT (SELECT count(*) FROM observation), (SELECT count(*) FROM replacement)");
  if (!n || !n->step()) return make_problem(path + ": damaged or truncated");
  if (auto c = check_counts(b->manifest, n->integer(0), n->integer(1)); !c)
    return make_problem(path + ": " + c.problem().message);
  return b->manifest;
}

namespace {

const std::string kGapWords = "(its sequences have a gap: merge its earlier bundle first)";


// What the station says when two files share a device id.
std::string clone_words(const std::string& device_id, const std::string& label) {
  return "two tablets hold copies of one device's trial file (device " + device_id + ", " + label +
         "), and each has recorded its own rows. Nothing was merged. Give the copy that made this bundle a new "
         "identity: furrow device renew --station THIS_TRIAL --db THAT_COPY (none of its rows is lost), then merge "
         "its new bundle";
}

bool is_device_id(const std::string& s) {
  if (s.size() != 16) return false;
  for (char c : s)
    if (!((c >= '0' && c <= '9') || (c >= 'a' && c <= 'f'))) return false;
  return true;
}

// "2026-05-02T08:01:02.000Z"
bool is_utc_time(const std::string& s) {
  if (s.size() != 24 || s[4] != '-' || s[7] != '-' || s[10] != 'T' || s[13] != ':' || s[16] != ':' || s[19] != '.' ||
      s[23] != 'Z')
    return false;
  for (size_t i : {0, 1, 2, 3, 5, 6, 8, 9, 11, 12, 14, 15, 17, 18, 20, 21, 22})
    if (s[i] < '0' || s[i] > '9') return false;
  const auto two = [&](size_t at) { return (s[at] - '0') * 10 + (s[at + 1] - '0'); };
  const int year = two(0) * 100 + two(2);
  return year >= 2000 && year <= 2200 && two(5) >= 1 && two(5) <= 12 && two(8) >= 1 && two(8) <= 31 && two(11) <= 23 &&
         two(14) <= 59 && two(17) <= 60;
}

// Every row of a bundle is checked as an entry is, and against who may
// write it (rules in bundle.h). Returns why the first bad row is refused.
Status check_rows(const std::vector<Row>& rows, const std::vector<Link>& links, const BundleManifest& m,
                  const StoredTrial& trial, const Enrolment& signer, Database& db) {
  std::map<std::string, const Trait*> traits;
  for (const Trait& t : trial.plan.traits) traits[t.code] = &t;
  std::set<std::string> plots;
  for (const PlannedPlot& p : trial.layout.plots) plots.insert(p.label);
  const bool at_station = trial.role == "station";
  if (!is_device_id(m.maker_device_id)) return make_problem("its maker's device id '" + m.maker_device_id + "' is not one Furrow makes");
  if (at_station && m.maker_role != "device")
    return make_problem("it says it was made by a station; a station takes bundles from its devices only");
  if (!at_station && m.maker_role != "station")
    return make_problem("it was made by a device; a device takes bundles from its station only");
  if (at_station && m.maker_device_id == trial.device_id)
    return make_problem("it claims to be made by this station's own device id");
  std::map<std::pair<std::string, std::int64_t>, const Row*> by_key;
  std::vector<std::int64_t> maker_sequences;
  for (const Row& r : rows) {
    const std::string where = "row " + r.device_id + "/" + std::to_string(r.sequence);
    if (!is_device_id(r.device_id)) return make_problem(where + ": the device id is not one Furrow makes");
    if (r.sequence < 1) return make_problem(where + ": sequences start at 1");
    // (A renewed device's bundle may carry its old id's rows it replaces,
    // those the station held when it was renewed; they must come back identical.)
    const bool predecessor = !signer.succeeds_device_id.empty() && r.device_id == signer.succeeds_device_id &&
                             r.sequence <= signer.succeeds_up_to;
    if (at_station && r.device_id != m.maker_device_id && !predecessor)
      return make_problem(where + ": a row of another device (a device's bundle carries its own rows only)");
    if (r.device_id == m.maker_device_id) maker_sequences.push_back(r.sequence);
    by_key[{r.device_id, r.sequence}] = &r;
    const auto t = traits.find(r.trait_code);
    if (!plots.count(r.plot_label) || t == traits.end())
      return make_problem(where + " names plot '" + r.plot_label + "' and trait '" + r.trait_code +
                          "', not both in this trial");
    const Trait& trait = *t->second;
    if (r.occasion < 1 || r.occasion > trait.occasions)
      return make_problem(where + ": occasion " + std::to_string(r.occasion) + " of " + trait.code + ", which has " +
                          std::to_string(trait.occasions) + (trait.occasions == 1 ? " occasion" : " occasions"));
    if (r.value.has_value() == r.missing_reason.has_value())
      return make_problem(where + ": a row holds either a value or the reason there is none");
    if (r.value) {
      auto parsed = parse_acceptable_value(trait, *r.value);
      if (!parsed) return make_problem(where + ", " + trait.code + ": " + parsed.problem().message);
      if (parsed->text != *r.value)
        return make_problem(where + ", " + trait.code + ": the value '" + *r.value + "' is not written as Furrow writes it");
      const bool numbers_agree = parsed->number.has_value() == r.number.has_value() &&
                                 (!r.number || *parsed->number == *r.number);
      if (!numbers_agree) return make_problem(where + ", " + trait.code + ": its number does not match its value");
    } else {
      if (r.number) return make_problem(where + ": a row without a value has a number");
      if (r.missing_reason->empty() || r.missing_reason->size() > kMaxReasonBytes)
        return make_problem(where + ": the reason for no value is empty or too long");
    }
    if (r.note.size() > kMaxNoteBytes) return make_problem(where + ": the note is longer than 2,000 bytes");
    if (has_control_character(r.note, true) || has_control_character(r.observer) ||
        has_control_character(r.missing_reason.value_or("")) || has_control_character(r.value.value_or("")))
      return make_problem(where + ": its text holds a control character");
    if (r.observer.empty() || r.observer.size() > kMaxNameBytes)
      return make_problem(where + ": the observer's name is empty or longer than 200 bytes");
    if (!is_utc_time(r.recorded_at)) return make_problem(where + ": the time '" + r.recorded_at + "' is not a UTC time");
    if (r.confirmed_checks.size() > kMaxNameBytes) return make_problem(where + ": its confirmed checks are too long");
  }
  auto held_cell = db.prepare("SELECT p.label, t.code, o.occasion FROM observation o JOIN plot p ON p.id = o.plot_id "
                              "JOIN trait t ON t.id = o.trait_id WHERE o.device_id = ? AND o.sequence = ?");
  if (!held_cell) return held_cell.problem();
  auto held_link = db.prepare("SELECT 1 FROM replacement WHERE device_id = ? AND sequence = ? AND replaced_device_id = ? "
                              "AND replaced_sequence = ?");
  if (!held_link) return held_link.problem();
  // Authority: a device's rows replace only that device's rows (and a
  // renewed device's, its old id's rows the station held when it was
  // renewed); only the station's rows (settlements) replace another
  // device's. At a device, its station's signed bundle is the authority.
  for (const Link& l : links) {
    const std::string where = "row " + l.device_id + "/" + std::to_string(l.sequence);
    if (!by_key.count({l.device_id, l.sequence})) return make_problem(where + ": a link from a row the bundle does not carry");
    const bool succession = !signer.succeeds_device_id.empty() && l.replaced_device_id == signer.succeeds_device_id &&
                            l.replaced_sequence >= 1 && l.replaced_sequence <= signer.succeeds_up_to;
    if (at_station && l.device_id != l.replaced_device_id && !succession)
      return make_problem(where + " replaces row " + l.replaced_device_id + "/" + std::to_string(l.replaced_sequence) +
                          " of another device; only the station settles between devices");
    if (l.device_id == l.replaced_device_id && l.replaced_sequence >= l.sequence)
      return make_problem(where + " replaces a later row of its own device");
    // A row replaces rows of its own cell only, and a row this file holds
    // keeps the links it came with.
    const Row& from = *by_key.at({l.device_id, l.sequence});
    std::string plot, trait;
    std::int64_t occasion = 0;
    if (const auto in_bundle = by_key.find({l.replaced_device_id, l.replaced_sequence}); in_bundle != by_key.end()) {
      plot = in_bundle->second->plot_label;
      trait = in_bundle->second->trait_code;
      occasion = in_bundle->second->occasion;
    } else {
      held_cell->reset();
      held_cell->bind(1, l.replaced_device_id).bind(2, l.replaced_sequence);
      if (!held_cell->step())
        return make_problem(where + " replaces row " + l.replaced_device_id + "/" + std::to_string(l.replaced_sequence) +
                            ", which neither the bundle nor this file holds");
      plot = held_cell->text(0);
      trait = held_cell->text(1);
      occasion = held_cell->integer(2);
    }
    if (plot != from.plot_label || trait != from.trait_code || occasion != from.occasion)
      return make_problem(where + " (plot " + from.plot_label + ", " + from.trait_code + ") replaces row " +
                          l.replaced_device_id + "/" + std::to_string(l.replaced_sequence) + " of another cell (plot " +
                          plot + ", " + trait + "); a row replaces rows of its own cell only");
    held_cell->reset();
    held_cell->bind(1, l.device_id).bind(2, l.sequence);
    if (held_cell->step()) {
      held_link->reset();
      held_link->bind(1, l.device_id).bind(2, l.sequence).bind(3, l.replaced_device_id).bind(4, l.replaced_sequence);
      if (!held_link->step())
        return make_problem(where + " is held here already without a link to row " + l.replaced_device_id + "/" +
                            std::to_string(l.replaced_sequence) + "; a row's links cannot change after it is saved");
    }
  }
  // Sequences: the maker's rows follow on from what this database holds of
  // it, with no gap.
  if (at_station && !maker_sequences.empty()) {
    std::sort(maker_sequences.begin(), maker_sequences.end());
    auto held = db.prepare("SELECT coalesce(max(sequence), 0) FROM observation WHERE device_id = ?");
    if (!held) return held.problem();
    held->bind(1, m.maker_device_id);
    const std::int64_t have = held->step() ? held->integer(0) : 0;
    std::int64_t expect = std::min(maker_sequences.front(), have + 1);
    if (maker_sequences.front() > have + 1)
      return make_problem("row " + m.maker_device_id + "/" + std::to_string(maker_sequences.front()) +
                          ": rows " + std::to_string(have + 1) + " to " + std::to_string(maker_sequences.front() - 1) +
                          " of that device are missing " + kGapWords);
    for (std::int64_t q : maker_sequences) {
      if (q != expect)
        return make_problem("row " + m.maker_device_id + "/" + std::to_string(expect) +
                            " is missing between the device's rows " + kGapWords);
      ++expect;
    }
  }
  return ok_status();
}

}  // namespace

bool waits_for_earlier_bundle(const Problem& p) { return p.message.find(kGapWords) != std::string::npos; }

Result<MergeOutcome> merge_bundle(Database& db, const StoredTrial& trial, const std::string& path) {
  // Every bundle is checked whole, even one merged before: its signature
  // first (one byte changed anywhere and it is refused), then who signed it.
  auto file = read_signed_file(path);
  if (!file) return file.problem();
  const auto refuse = [&](const std::string& why) { return make_problem(path + ": refused: " + why); };
  auto who = enrolment_by_key(db, file->signer_key);
  if (!who) return make_problem(path + ": " + who.problem().message);
  const std::string fingerprint = key_fingerprint(file->signer_key);
  const bool at_station = trial.role == "station";
  if (at_station) {
    if (!*who)
      return refuse("it is signed with a key this station has not enrolled (key " + fingerprint +
                    "); the station takes bundles only from the device copies it made (furrow trial copy) or enrolled "
                    "(furrow device enrol)");
    if ((*who)->role == "station")
      return refuse("it is signed with this station's own key; a station takes bundles from its devices only");
    if ((*who)->revoked())
      return refuse("device " + (*who)->device_id + " (" + (*who)->label + ") was revoked on " +
                    *(*who)->revoked_at + " by " + (*who)->revoked_by.value_or("?") +
                    "; its bundles are refused (the rows merged before stay, marked)");
  } else if (!*who || (*who)->role != "station") {
    return refuse("it is not signed by this trial's station (key " + fingerprint +
                  "); a device takes bundles from its own station only");
  }
  const Enrolment& signer = **who;
  {
    // Merged before (the very same bytes): nothing new, and nothing to write.
    auto s = db.prepare("SELECT 1 FROM merged_bundle WHERE checksum = ?");
    if (!s) return s.problem();
    s->bind(1, file->file_hash);
    if (s->step()) {
      auto b = open_bundle(path, *file);
      if (!b) return b.problem();
      return MergeOutcome{b->manifest, 0, 0};
    }
  }
  auto b = open_bundle(path, *file);
  if (!b) return b.problem();
  const BundleManifest& m = b->manifest;
  if (m.trial_uid != trial.uid)
    return make_problem(path + ": a bundle of the trial '" + m.trial_name + "' (" + m.trial_uid +
                        "), which this database does not hold (it holds '" + trial.plan.name + "', " + trial.uid + ")");
  if (m.plan_hash != plan_hash(trial))
    return make_problem(path + ": made with a different plan of '" + m.trial_name +
                        "' (plan hash " + m.plan_hash.substr(0, 12) + " here " + plan_hash(trial).substr(0, 12) + ")");
  if (m.maker_device_id != signer.device_id)
    return refuse("it says it was made by " + m.maker_device_id + " but is signed with the key of " +
                  signer.device_id + " (" + signer.label + ")");
  std::map<std::string, std::int64_t> plot_id, trait_id;
  for (size_t i = 0; i < trial.layout.plots.size(); ++i) plot_id[trial.layout.plots[i].label] = trial.plot_ids[i];
  for (size_t k = 0; k < trial.plan.traits.size(); ++k) trait_id[trial.plan.traits[k].code] = trial.trait_ids[k];

  // The rows are read once, checked whole, then inserted from memory.
  std::vector<Row> rows;
  std::vector<Link> links;
  {
    auto read = b->db.prepare("SELECT device_id, sequence, plot_label, trait_code, occasion, value, number, "
                              "missing_reason, note, observer, recorded_at, confirmed_checks FROM observation "
                              "ORDER BY device_id, sequence");
    if (!read) return make_problem(path + ": " + read.problem().message);
    while (read->step()) rows.push_back(read_row(*read));
    if (read->failed()) return make_problem(path + ": " + read->error());
    auto ls = b->db.prepare("SELECT device_id, sequence, replaced_device_id, replaced_sequence FROM replacement");
    if (!ls) return make_problem(path + ": " + ls.problem().message);
    while (ls->step()) links.push_back({ls->text(0), ls->integer(1), ls->text(2), ls->integer(3)});
    if (ls->failed()) return make_problem(path + ": " + ls->error());
    if (auto c = check_counts(m, static_cast<std::int64_t>(rows.size()), static_cast<std::int64_t>(links.size())); !c)
      return make_problem(path + ": " + c.problem().message);
    if (auto c = check_rows(rows, links, m, trial, signer, db); !c) return refuse(c.problem().message);
  }
  MergeOutcome out{m, 0, 0};
  Status merged = in_transaction(db, [&]() -> Status {
    auto insert = db.prepare("INSERT INTO observation (device_id, sequence, plot_id, trait_id, occasion, value, number, "
                             "missing_reason, note, observer, recorded_at, confirmed_checks) VALUES (?,?,?,?,?,?,?,?,?,?,?,?) "
                             "ON CONFLICT DO NOTHING");
    if (!insert) return insert.problem();
    auto held = db.prepare(std::string("SELECT ") + kRowColumns +
                           " FROM observation o JOIN plot p ON p.id = o.plot_id JOIN trait t ON t.id = o.trait_id "
                           "WHERE o.device_id = ? AND o.sequence = ?");
    if (!held) return held.problem();
    for (const Row& r : rows) {
      const auto p = plot_id.find(r.plot_label);
      const auto t = trait_id.find(r.trait_code);
      if (p == plot_id.end() || t == trait_id.end())
        return make_problem(path + ": row " + r.device_id + "/" + std::to_string(r.sequence) + " names plot '" +
                            r.plot_label + "' and trait '" + r.trait_code + "', not both in this trial");
      insert->reset();
      insert->bind(1, r.device_id).bind(2, r.sequence).bind(3, p->second).bind(4, t->second).bind(5, r.occasion)
          .bind(6, r.value).bind(7, r.number).bind(8, r.missing_reason).bind(9, r.note).bind(10, r.observer)
          .bind(11, r.recorded_at).bind(12, r.confirmed_checks);
      FURROW_TRY(insert->run());
      if (db.changes() == 1) {
        ++out.observations_added;
        continue;
      }
      // Held already: it must be the very same row.
      held->reset();
      held->bind(1, r.device_id).bind(2, r.sequence);
      if (!held->step() || !(read_row(*held) == r))
        return make_problem(path + ": refused: row " + r.device_id + "/" + std::to_string(r.sequence) +
                            " differs from the row of that key this file holds: " +
                            (at_station ? clone_words(r.device_id, signer.label)
                                        : "another copy of this trial file is recording as this device (" +
                                              r.device_id + "); the station manager gives one copy a new identity "
                                              "(furrow device renew), then no row is lost"));
    }
    auto link = db.prepare("INSERT INTO replacement (device_id, sequence, replaced_device_id, replaced_sequence) "
                           "VALUES (?,?,?,?) ON CONFLICT DO NOTHING");
    if (!link) return link.problem();
    for (const Link& l : links) {
      link->reset();
      link->bind(1, l.device_id).bind(2, l.sequence).bind(3, l.replaced_device_id).bind(4, l.replaced_sequence);
      if (auto s = link->run(); !s)
        return make_problem(path + ": a link of row " + l.device_id + "/" + std::to_string(l.sequence) +
                            " names a row neither file holds (" + s.problem().message + ")");
      out.replacements_added += db.changes();
    }
    if (m.maker_role == "station" && trial.role == "device") {
      auto h = db.prepare("INSERT INTO station_holding (device_id, max_sequence) VALUES (?, ?) "
                          "ON CONFLICT (device_id) DO UPDATE SET max_sequence = max(max_sequence, excluded.max_sequence)");
      if (!h) return h.problem();
      for (const auto& [dev, n] : b->holding) {
        h->reset();
        h->bind(1, dev).bind(2, n);
        FURROW_TRY(h->run());
      }
    }
    auto note = db.prepare("INSERT INTO merged_bundle VALUES (?,?,?,?,?) ON CONFLICT DO NOTHING");
    if (!note) return note.problem();
    note->bind(1, m.file_hash).bind(2, m.maker_device_id).bind(3, utc_now()).bind(4, out.observations_added)
        .bind(5, out.replacements_added);
    return note->run();
  });
  if (!merged) return merged.problem();
  return out;
}

Result<std::string> canonical_log(Database& db) {
  std::string out;
  {
    auto s = db.prepare(std::string("SELECT ") + kRowColumns +
                        " FROM observation o JOIN plot p ON p.id = o.plot_id JOIN trait t ON t.id = o.trait_id "
                        "ORDER BY o.device_id, o.sequence");
    if (!s) return s.problem();
    while (s->step()) {
      const Row r = read_row(*s);
      out += "o|" + r.device_id + "|" + std::to_string(r.sequence) + "|" + r.plot_label + "|" + r.trait_code + "|" +
             std::to_string(r.occasion) + "|" + r.value.value_or("~") + "|" + opt_key(r.number) + "|" +
             r.missing_reason.value_or("~") + "|" + r.note + "|" + r.observer + "|" + r.recorded_at + "|" + r.confirmed_checks + "\n";
    }
  }
  {
    auto s = db.prepare("SELECT device_id, sequence, replaced_device_id, replaced_sequence FROM replacement "
                        "ORDER BY device_id, sequence, replaced_device_id, replaced_sequence");
    if (!s) return s.problem();
    while (s->step())
      out += "r|" + s->text(0) + "|" + std::to_string(s->integer(1)) + "|" + s->text(2) + "|" +
             std::to_string(s->integer(3)) + "\n";
  }
  return out;
}

namespace {

void remove_trial_file(const std::string& path) {
  std::error_code ec;
  for (const char* suffix : {"", "-wal", "-shm", "-journal"}) std::filesystem::remove(path + suffix, ec);
}

// The station's enrolment as a device's copy holds it.
Result<Enrolment> station_enrolment(OpenTrial& station, const DeviceEnrolment& who) {
  if (station.trial.role != "station")
    return make_problem("this file is a device's copy, not a station's trial; copies are made from the station's file");
  auto key = own_key(station.db);
  if (!key) return key.problem();
  Enrolment e;
  e.device_id = station.trial.device_id;
  e.role = "station";
  e.public_key = key->public_key;
  e.label = "Station";
  e.enrolled_by = who.by;
  e.enrolled_at = utc_now();
  return e;
}

// A device's enrolment at its station: labelled as asked, else by its file's name.
Enrolment device_enrolment(const std::string& device_id, const std::string& public_key, const DeviceEnrolment& who,
                           const std::string& device_path) {
  Enrolment e;
  e.device_id = device_id;
  e.public_key = public_key;
  e.label = who.label.empty() ? std::filesystem::path(device_path).stem().string() : who.label;
  e.enrolled_by = who.by;
  e.enrolled_at = utc_now();
  return e;
}

Status check_enrolment_request(const DeviceEnrolment& who) {
  if (who.by.empty() || who.by.size() > 200) return make_problem("say who enrols the device (a name of at most 200 bytes)");
  if (who.label.size() > 200) return make_problem("the device's label is longer than 200 bytes");
  return ok_status();
}

// A new device copy at `device_path` of the station's trial, enrolled at the
// station (as the successor of `succeeds` up to `up_to`, when given).
Result<std::string> make_device_copy(OpenTrial& station, const std::string& station_path,
                                     const std::string& device_path, const DeviceEnrolment& who,
                                     const std::string& succeeds, std::int64_t up_to) {
  FURROW_TRY(check_enrolment_request(who));
  if (std::filesystem::exists(device_path)) return make_problem(device_path + " already exists; choose a new file name");
  auto station_entry = station_enrolment(station, who);
  if (!station_entry) return make_problem(station_path + ": " + station_entry.problem().message);
  const std::string temp = device_path + ".station-bundle";
  auto made = write_bundle(station.db, station.trial, temp, true);
  if (!made) return made.problem();
  std::string device_id;
  Status result = [&]() -> Status {
    FURROW_TRY(create_trial_database(device_path, station.trial.plan, station.trial.layout,
                                     TrialIdentity{station.trial.uid, "device"}));
    auto device = open_trial_database(device_path);
    if (!device) return device.problem();
    device_id = device->trial.device_id;
    auto key = own_key(device->db);
    if (!key) return make_problem(device_path + ": " + key.problem().message);
    FURROW_TRY(add_enrolment(device->db, *station_entry));
    auto merged = merge_bundle(device->db, device->trial, temp);
    if (!merged) return merged.problem();
    Enrolment e = device_enrolment(device_id, key->public_key, who, device_path);
    e.succeeds_device_id = succeeds;
    e.succeeds_up_to = up_to;
    if (auto s = add_enrolment(station.db, e); !s) return make_problem(station_path + ": " + s.problem().message);
    return ok_status();
  }();
  std::error_code ec;
  std::filesystem::remove(temp, ec);
  if (!result) {
    remove_trial_file(device_path);
    return result.problem();
  }
  return device_id;
}

}  // namespace

Status copy_trial_for_device(const std::string& station_path, const std::string& device_path,
                             const DeviceEnrolment& who) {
  if (std::filesystem::exists(device_path)) return make_problem(device_path + " already exists; choose a new file name");
  auto station = open_trial_database(station_path);
  if (!station) return station.problem();
  auto made = make_device_copy(*station, station_path, device_path, who, "", 0);
  if (!made) return made.problem();
  return ok_status();
}

Status enrol_existing_device(const std::string& station_path, const std::string& device_path,
                             const DeviceEnrolment& who) {
  FURROW_TRY(check_enrolment_request(who));
  auto station = open_trial_database(station_path);
  if (!station) return station.problem();
  auto device = open_trial_database(device_path);
  if (!device) return device.problem();
  if (device->trial.role != "device") return make_problem(device_path + " is a station's trial, not a device's copy");
  if (device->trial.uid != station->trial.uid)
    return make_problem(device_path + " is a copy of '" + device->trial.plan.name + "' (" + device->trial.uid +
                        "), not of this station's trial '" + station->trial.plan.name + "'");
  if (plan_hash(device->trial) != plan_hash(station->trial))
    return make_problem(device_path + " holds a different plan of '" + station->trial.plan.name + "'");
  auto station_entry = station_enrolment(*station, who);
  if (!station_entry) return make_problem(station_path + ": " + station_entry.problem().message);
  auto known_station = enrolment_of(device->db, station_entry->device_id);
  if (!known_station) return known_station.problem();
  if (*known_station && (*known_station)->public_key != station_entry->public_key)
    return make_problem(device_path + " knows another key for its station; it cannot be enrolled here");
  auto key = own_key(device->db);
  if (!key) return make_problem(device_path + ": " + key.problem().message);
  auto known_device = enrolment_of(station->db, device->trial.device_id);
  if (!known_device) return known_device.problem();
  if (*known_device) {
    if ((*known_device)->public_key == key->public_key && *known_station)
      return make_problem(device_path + ": device " + device->trial.device_id + " is enrolled already");
    if ((*known_device)->public_key != key->public_key)
      return make_problem(device_path + ": the station enrolled device " + device->trial.device_id +
                          " with another key (a copied file?); give this copy a new identity with furrow device renew");
  }
  if (!*known_station) FURROW_TRY(add_enrolment(device->db, *station_entry));
  if (!*known_device) {
    const Enrolment e = device_enrolment(device->trial.device_id, key->public_key, who, device_path);
    if (auto s = add_enrolment(station->db, e); !s) return make_problem(station_path + ": " + s.problem().message);
  }
  return ok_status();
}

Result<RenewOutcome> renew_device_identity(const std::string& station_path, const std::string& device_path,
                                           const DeviceEnrolment& who) {
  FURROW_TRY(check_enrolment_request(who));
  DeviceEnrolment renamed = who;
  auto station = open_trial_database(station_path);
  if (!station) return station.problem();
  RenewOutcome out;
  std::vector<Row> own;
  std::vector<Link> own_links;
  WalkChoice walk;
  {
    auto device = open_trial_database(device_path);
    if (!device) return device.problem();
    if (device->trial.role != "device") return make_problem(device_path + " is a station's trial, not a device's copy");
    if (device->trial.uid != station->trial.uid)
      return make_problem(device_path + " is a copy of the trial '" + device->trial.plan.name + "' (" +
                          device->trial.uid + "), not of this station's trial '" + station->trial.plan.name + "' (" +
                          station->trial.uid + ")");
    if (plan_hash(device->trial) != plan_hash(station->trial))
      return make_problem(device_path + " holds a different plan of '" + station->trial.plan.name +
                          "' (the file was altered); it cannot be given a new identity");
    out.old_device_id = device->trial.device_id;
    auto old = enrolment_of(station->db, out.old_device_id);
    if (!old) return old.problem();
    if (*old && (*old)->revoked())
      return make_problem("device " + out.old_device_id + " (" + (*old)->label + ") was revoked on " +
                          *(*old)->revoked_at + " by " + (*old)->revoked_by.value_or("?") +
                          "; a new identity would take its rows in again. If the tablet is back in safe hands, make a "
                          "new copy for it with furrow trial copy");
    if (who.label.empty() && *old) renamed.label = (*old)->label + " (new identity)";
    auto rows = device->db.prepare(std::string("SELECT ") + kRowColumns +
                                   " FROM observation o JOIN plot p ON p.id = o.plot_id JOIN trait t ON t.id = o.trait_id "
                                   "WHERE o.device_id = ? ORDER BY o.sequence");
    if (!rows) return rows.problem();
    rows->bind(1, out.old_device_id);
    while (rows->step()) own.push_back(read_row(*rows));
    if (rows->failed()) return make_problem(device_path + ": " + rows->error());
    auto links = device->db.prepare("SELECT device_id, sequence, replaced_device_id, replaced_sequence FROM replacement "
                                    "WHERE device_id = ? ORDER BY sequence");
    if (!links) return links.problem();
    links->bind(1, out.old_device_id);
    while (links->step()) own_links.push_back({links->text(0), links->integer(1), links->text(2), links->integer(3)});
    auto w = load_walk_choice(device->db);
    if (w) walk = *w;
  }
  // The old id's rows the station holds, identical, from the first on: they
  // stay the old id's. Every later row becomes the new id's, in order.
  {
    auto held = station->db.prepare(std::string("SELECT ") + kRowColumns +
                                    " FROM observation o JOIN plot p ON p.id = o.plot_id JOIN trait t ON t.id = o.trait_id "
                                    "WHERE o.device_id = ? AND o.sequence = ?");
    if (!held) return held.problem();
    for (const Row& r : own) {
      held->reset();
      held->bind(1, r.device_id).bind(2, r.sequence);
      if (r.sequence != out.kept_under_old_id + 1 || !held->step() || !(read_row(*held) == r)) break;
      ++out.kept_under_old_id;
    }
  }
  const std::int64_t k = out.kept_under_old_id;
  const std::string temp = device_path + ".renewing";
  remove_trial_file(temp);
  auto made = make_device_copy(*station, station_path, temp, renamed, out.old_device_id, k);
  if (!made) return made.problem();
  out.new_device_id = *made;
  Status moved = [&]() -> Status {
    auto fresh = open_trial_database(temp);
    if (!fresh) return fresh.problem();
    std::map<std::string, std::int64_t> plot_id, trait_id;
    for (size_t i = 0; i < fresh->trial.layout.plots.size(); ++i)
      plot_id[fresh->trial.layout.plots[i].label] = fresh->trial.plot_ids[i];
    for (size_t t = 0; t < fresh->trial.plan.traits.size(); ++t)
      trait_id[fresh->trial.plan.traits[t].code] = fresh->trial.trait_ids[t];
    FURROW_TRY(in_transaction(fresh->db, [&]() -> Status {
      auto insert = fresh->db.prepare("INSERT INTO observation (device_id, sequence, plot_id, trait_id, occasion, value, "
                                      "number, missing_reason, note, observer, recorded_at, confirmed_checks) "
                                      "VALUES (?,?,?,?,?,?,?,?,?,?,?,?)");
      if (!insert) return insert.problem();
      for (const Row& r : own) {
        if (r.sequence <= k) continue;
        const auto p = plot_id.find(r.plot_label);
        const auto t = trait_id.find(r.trait_code);
        if (p == plot_id.end() || t == trait_id.end())
          return make_problem("row " + r.device_id + "/" + std::to_string(r.sequence) + " names plot '" + r.plot_label +
                              "' and trait '" + r.trait_code + "', not both in the plan");
        insert->reset();
        insert->bind(1, out.new_device_id).bind(2, r.sequence - k).bind(3, p->second)
            .bind(4, t->second).bind(5, r.occasion).bind(6, r.value).bind(7, r.number)
            .bind(8, r.missing_reason).bind(9, r.note).bind(10, r.observer).bind(11, r.recorded_at)
            .bind(12, r.confirmed_checks);
        FURROW_TRY(insert->run());
        ++out.rows_moved;
      }
      auto link = fresh->db.prepare("INSERT INTO replacement (device_id, sequence, replaced_device_id, replaced_sequence) "
                                    "VALUES (?,?,?,?)");
      if (!link) return link.problem();
      for (const Link& l : own_links) {
        if (l.sequence <= k) continue;
        const bool moved_too = l.replaced_device_id == out.old_device_id && l.replaced_sequence > k;
        link->reset();
        link->bind(1, out.new_device_id).bind(2, l.sequence - k)
            .bind(3, moved_too ? out.new_device_id : l.replaced_device_id)
            .bind(4, moved_too ? l.replaced_sequence - k : l.replaced_sequence);
        FURROW_TRY(link->run());
      }
      return ok_status();
    }));
    if (!walk.trait_codes.empty()) FURROW_TRY(save_walk_choice(fresh->db, walk));
    return ok_status();
  }();
  if (!moved) {
    remove_trial_file(temp);
    return make_problem(device_path + ": the new identity could not be made (" + moved.problem().message +
                        "); the copy is unchanged");
  }
  // The old file is kept beside the new one, never deleted.
  out.kept_file = device_path + ".before-renewal-" + utc_now().substr(0, 10);
  for (int n = 2; std::filesystem::exists(out.kept_file); ++n)
    out.kept_file = device_path + ".before-renewal-" + utc_now().substr(0, 10) + "-" + std::to_string(n);
  std::error_code ec;
  std::filesystem::rename(device_path, out.kept_file, ec);
  if (ec) return make_problem(device_path + ": cannot set the old file aside: " + ec.message());
  std::filesystem::rename(temp, device_path, ec);
  if (ec) return make_problem(device_path + ": the renewed copy is " + temp + " (cannot rename it: " + ec.message() + ")");
  return out;
}

Status unpack_bundle(const std::string& bundle_path, const std::string& image_path) {
  auto file = read_signed_file(bundle_path);
  if (!file) return file.problem();
  return write_text_file(image_path, std::string(file->image()));
}

Status seal_bundle(const std::string& image_path, const std::string& signer_trial_path, const std::string& bundle_path) {
  auto signer = open_trial_database(signer_trial_path);
  if (!signer) return signer.problem();
  auto key = own_key(signer->db);
  if (!key) return make_problem(signer_trial_path + ": " + key.problem().message);
  std::ifstream in(image_path, std::ios::binary);
  if (!in) return make_problem(image_path + ": cannot be read");
  const std::string image((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  return write_text_file(bundle_path, seal(image, *key));
}

}  // namespace furrow
