// Hostile and careless bundles, built afresh each run from a small scenario:
// a station, device A (whose good bundle each case starts from), device B.
// Each case edits A's bundle in SQLite as a forger would, writes the
// checksum again (anyone can: it only detects damage), and must be refused
// with a message that names the bundle and the reason, leaving the station
// byte for byte as it was. Cases named "fault N" reproduce the findings of
// the issue that asked for this check.

#include <doctest/doctest.h>

#include <filesystem>
#include <fstream>
#include <sstream>

#include "app/work/record_session.h"
#include "storage/bundle.h"
#include "storage/settle.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

namespace fs = std::filesystem;

void enter(RecordSession& s, const std::string& plot, const std::string& trait, const std::string& value) {
  REQUIRE(s.set_trait(trait).ok());
  REQUIRE(s.jump_to(plot).ok());
  auto out = s.enter(value);
  if (out.kind == EntryOutcome::Kind::needs_confirmation) out = s.confirm();
  REQUIRE(out.kind == EntryOutcome::Kind::saved);
}

struct Scenario {
  fs::path dir;
  std::string station, a, b, good, b_bundle;
  std::string station_id, a_id, b_id;
};

Scenario make_scenario() {
  Scenario sc;
  sc.dir = test::scratch_dir("hostile");
  fs::remove_all(sc.dir);
  fs::create_directories(sc.dir);
  sc.station = (sc.dir / "station.furrow").string();
  fs::copy_file(test::fresh_demo_trial("hostile_src.furrow"), sc.station);
  sc.a = (sc.dir / "a.furrow").string();
  sc.b = (sc.dir / "b.furrow").string();
  REQUIRE(copy_trial_for_device(sc.station, sc.a, DeviceEnrolment{"", "Test manager"}).ok());
  REQUIRE(copy_trial_for_device(sc.station, sc.b, DeviceEnrolment{"", "Test manager"}).ok());
  {
    // The station's own row on plot 101 height (a value a forger would overwrite).
    auto s = RecordSession::open(sc.station, "Station manager");
    REQUIRE(s.ok());
    enter(*s, "101", "height_cm", "96");
  }
  {
    auto s = RecordSession::open(sc.a, "Ana");
    REQUIRE(s.ok());
    enter(*s, "102", "height_cm", "95");
    enter(*s, "103", "height_cm", "94");
    enter(*s, "103", "height_cm", "93");   // an edit: row 3 replaces row 2
  }
  {
    auto s = RecordSession::open(sc.b, "Ben");
    REQUIRE(s.ok());
    enter(*s, "104", "height_cm", "92");
  }
  for (auto [db, out] : {std::pair{sc.a, &sc.good}, std::pair{sc.b, &sc.b_bundle}}) {
    *out = db + ".bundle";
    auto open = open_trial_database(db);
    REQUIRE(open.ok());
    REQUIRE(write_bundle(open->db, open->trial, *out).ok());
  }
  for (auto [db, id] : {std::pair{sc.station, &sc.station_id}, std::pair{sc.a, &sc.a_id}, std::pair{sc.b, &sc.b_id}}) {
    auto open = open_trial_database(db);
    REQUIRE(open.ok());
    *id = open->trial.device_id;
  }
  return sc;
}

struct Case {
  std::string name, path, expect;
};

// A's good bundle with `sql` run on the database inside, signed again with
// A's own key: what whoever holds A's trial file (a hostile or careless
// enrolled device) can do. With `sign` false the edited database keeps the
// good bundle's signature.
Case edited(const Scenario& sc, const std::string& name, const std::string& sql, const std::string& expect,
            bool sign = true) {
  std::string file = name;
  for (char& c : file)
    if (!std::isalnum(static_cast<unsigned char>(c))) c = '_';
  const std::string out = (sc.dir / (file + ".bundle")).string();
  const std::string image = (sc.dir / (file + ".sqlite")).string();
  REQUIRE(unpack_bundle(sc.good, image).ok());
  {
    auto db = Database::create_standalone(image);
    REQUIRE(db.ok());
    const Status s = db->exec(sql);
    REQUIRE_MESSAGE(s.ok(), name << ": " << (s ? "" : s.problem().message));
    // The counts as the file now holds them, as a forger would write them
    // (a count forged as text is kept; a table made a view has none).
    if (sql.find("VIEW") == std::string::npos)
      db->exec("UPDATE manifest SET value = (SELECT count(*) FROM observation) WHERE key = 'observations' AND "
             "value NOT GLOB '*[^0-9]*'; UPDATE manifest SET value = (SELECT count(*) FROM replacement) "
             "WHERE key = 'replacements' AND value NOT GLOB '*[^0-9]*'");
  }
  if (sign) {
    REQUIRE(seal_bundle(image, sc.a, out).ok());
  } else {
    // The good bundle's head (its signature) with the edited database's length.
    std::string bytes = test::bytes_of(sc.good).substr(0, 112), body = test::bytes_of(image);
    for (int i = 0; i < 8; ++i) bytes += static_cast<char>((body.size() >> (8 * i)) & 0xFF);
    std::ofstream(out, std::ios::binary) << bytes << body;
  }
  return {name, out, expect};
}

// A's good bundle with one byte changed at `at`.
Case flipped(const Scenario& sc, size_t at) {
  std::string bytes = test::bytes_of(sc.good);
  REQUIRE(at < bytes.size());
  bytes[at] = static_cast<char>(bytes[at] ^ 0x20);
  const std::string out = (sc.dir / ("flipped_" + std::to_string(at) + ".bundle")).string();
  std::ofstream(out, std::ios::binary) << bytes;
  // Where the byte is says which check refuses it first (bundle.h: the file).
  const std::string expect = at < 16 ? "not a Furrow bundle"
                             : at >= 112 && at < 120 ? "truncated or extended"
                                                     : "signature does not match";
  return {"one byte changed at " + std::to_string(at), out, expect};
}

std::string replace_all(std::string s, const std::string& from, const std::string& to) {
  for (size_t at = s.find(from); at != std::string::npos; at = s.find(from, at + to.size())) s.replace(at, from.size(), to);
  return s;
}

TEST_CASE("a catalogue of hostile bundles: each refused by name and reason, the station unchanged") {
  const Scenario sc = make_scenario();
  // SQL templates: A, B and S stand for the devices' and the station's ids.
  const auto ids = [&](std::string sql) {
    sql = replace_all(sql, "{A}", sc.a_id);
    sql = replace_all(sql, "{B}", sc.b_id);
    return replace_all(sql, "{S}", sc.station_id);
  };
  const std::string row = "INSERT INTO observation VALUES ";
  std::vector<Case> cases = {
      edited(sc, "fault 1: a link replacing the station's own row",
             ids("INSERT INTO replacement VALUES ('{A}', 3, '{S}', 1)"), "only the station settles"),
      edited(sc, "fault 2: a row under the station's id with the largest sequence",
             ids(row + "('{S}', 9223372036854775807, '105', 'height_cm', 1, '90', 90.0, NULL, '', 'Eve', "
                       "'2026-05-02T08:00:00.000Z', '')"),
             "a row of another device"),
      edited(sc, "fault 3: a row claiming device B's next sequence",
             ids(row + "('{B}', 2, '105', 'height_cm', 1, '90', 90.0, NULL, '', 'Eve', '2026-05-02T08:00:00.000Z', '')"),
             "a row of another device"),
      edited(sc, "fault 4: the observation table replaced by a recursive view",
             "DROP TABLE observation; CREATE VIEW observation AS WITH RECURSIVE r(n) AS (SELECT 1 UNION ALL "
             "SELECT n + 1 FROM r) SELECT n AS device_id, n AS sequence, n AS plot_label, n AS trait_code, "
             "n AS occasion, n AS value, n AS number, n AS missing_reason, n AS note, n AS observer, "
             "n AS recorded_at, n AS confirmed_checks FROM r",
             "view"),
      edited(sc, "fault 5: heading 9999 beyond its limit",
             ids("UPDATE observation SET trait_code = 'heading_days', value = '9999', number = 9999 WHERE sequence = 1"),
             "possible range"),
      edited(sc, "fault 5: a count that is not a number",
             ids("UPDATE observation SET trait_code = 'stand_count', value = 'abc', number = NULL WHERE sequence = 1"),
             "stand_count"),
      edited(sc, "fault 5: a score off the scale",
             ids("UPDATE observation SET trait_code = 'lodging_score', value = '12', number = 12 WHERE sequence = 1"),
             "lodging_score"),
      edited(sc, "fault 5: occasion 7 of a one-occasion trait", "UPDATE observation SET occasion = 7 WHERE sequence = 1",
             "occasion 7"),
      edited(sc, "fault 6: a bundle that says it is the station's",
             ids("UPDATE manifest SET value = 'station' WHERE key = 'maker_role'; "
                 "INSERT OR REPLACE INTO holding VALUES ('{A}', 999)"),
             "made by a station"),
      edited(sc, "a trigger inside the bundle",
             "CREATE TRIGGER t AFTER INSERT ON holding BEGIN DELETE FROM observation; END", "trigger"),
      edited(sc, "an extra table", "CREATE TABLE extra (x)", "not those of a Furrow bundle"),
      edited(sc, "a virtual table", "CREATE VIRTUAL TABLE v USING fts5(x)", ""),
      edited(sc, "an oversize note", "UPDATE observation SET note = printf('%.*c', 3000000, 'x') WHERE sequence = 1", ""),
      edited(sc, "an empty device id", "UPDATE observation SET device_id = '' WHERE sequence = 1; DELETE FROM replacement",
             "device id"),
      edited(sc, "a device id with a slash",
             ids("UPDATE observation SET device_id = 'ab/cdef012345678' WHERE sequence = 1; DELETE FROM replacement"),
             "device id"),
      edited(sc, "a negative sequence", ids("UPDATE observation SET sequence = -1 WHERE sequence = 1"), "start at 1"),
      edited(sc, "a row of another device", ids("UPDATE observation SET device_id = '{B}' WHERE sequence = 1"),
             "another device"),
      edited(sc, "a link to another device's row", ids("INSERT INTO replacement VALUES ('{A}', 3, '{B}', 1)"),
             "only the station settles"),
      edited(sc, "a settlement made by a device",
             ids("INSERT INTO replacement VALUES ('{A}', 1, '{B}', 1); INSERT INTO replacement VALUES "
                 "('{A}', 1, '{S}', 1)"),
             "only the station settles"),
      edited(sc, "a gap in the device's sequences", ids("UPDATE observation SET sequence = 9 WHERE sequence = 1"), "gap"),
      edited(sc, "a value not written as Furrow writes it", "UPDATE observation SET value = ' 95' WHERE sequence = 1",
             "not written as Furrow writes it"),
      edited(sc, "a number that does not match its value", "UPDATE observation SET number = 59 WHERE sequence = 1",
             "does not match"),
      edited(sc, "a value and a reason at once", "UPDATE observation SET missing_reason = 'flooded' WHERE sequence = 1",
             "either a value or the reason"),
      edited(sc, "an empty observer", "UPDATE observation SET observer = '' WHERE sequence = 1", "observer"),
      edited(sc, "a time that is not one", "UPDATE observation SET recorded_at = 'yesterday' WHERE sequence = 1",
             "not a UTC time"),
      edited(sc, "a time with month 99 and hour 99",
             "UPDATE observation SET recorded_at = '2026-99-99T99:99:99.999Z' WHERE sequence = 1", "not a UTC time"),
      edited(sc, "a link from one plot's row to another plot's row",
             ids("INSERT INTO replacement VALUES ('{A}', 3, '{A}', 1)"), "of another cell"),
      edited(sc, "a plot not in the plan", "UPDATE observation SET plot_label = '999' WHERE sequence = 1",
             "not both in this trial"),
      edited(sc, "a maker id that is not one", "UPDATE manifest SET value = 'Z' WHERE key = 'maker_device_id'",
             "signed with the key of"),
      edited(sc, "a maker claiming the station's own id",
             ids("UPDATE manifest SET value = '{S}' WHERE key = 'maker_device_id'"), "signed with the key of"),
      edited(sc, "fault 13: a row count written as 1e3", "UPDATE manifest SET value = '3e0' WHERE key = 'observations'",
             "not a plain number"),
      edited(sc, "a value altered and the signature left", "UPDATE observation SET value = '59', number = 59 WHERE "
             "sequence = 1", "signature does not match", false),
      edited(sc, "the maker's id changed to B's and signed by A",
             ids("UPDATE manifest SET value = '{B}' WHERE key = 'maker_device_id'; UPDATE observation SET device_id = "
                 "'{B}'; UPDATE replacement SET device_id = '{B}', replaced_device_id = '{B}'"),
             "signed with the key of"),
      edited(sc, "an extra manifest entry", "INSERT INTO manifest VALUES ('checksum', 'x')", "manifest holds entries"),
      edited(sc, "NULL and wrong-typed keys (the table made loose to hold them)",
             "CREATE TABLE loose AS SELECT * FROM observation; DROP TABLE observation; ALTER TABLE loose RENAME TO "
             "observation; UPDATE observation SET plot_label = NULL, sequence = 'one' WHERE sequence = 1",
             "not those of a Furrow bundle"),
  };
  {
    // Signed with the key of a trial file this station never enrolled (a
    // station of another trial, say), the manifest unchanged.
    const std::string stranger = test::fresh_demo_trial("hostile_stranger.furrow");
    const std::string image = (sc.dir / "stranger.sqlite").string(), out = (sc.dir / "stranger.bundle").string();
    REQUIRE(unpack_bundle(sc.good, image).ok());
    REQUIRE(seal_bundle(image, stranger, out).ok());
    cases.push_back({"signed with a key the station never enrolled", out, "has not enrolled"});
    // Signed by B, claiming to be A's.
    const std::string as_b = (sc.dir / "signed_by_b.bundle").string();
    REQUIRE(seal_bundle(image, sc.b, as_b).ok());
    cases.push_back({"A's rows signed with B's key", as_b, "signed with the key of"});
    // Signed with the station's own key.
    const std::string as_station = (sc.dir / "signed_by_station.bundle").string();
    REQUIRE(seal_bundle(image, sc.station, as_station).ok());
    cases.push_back({"a device's bundle signed with the station's own key", as_station, "station's own key"});
  }
  {
    // One byte changed anywhere: every byte of the head, and bytes spread
    // through the database (pages, free space, the end).
    const size_t size = test::bytes_of(sc.good).size();
    for (size_t at = 0; at < 120; ++at) cases.push_back(flipped(sc, at));
    for (size_t at = 120; at < size; at += 997) cases.push_back(flipped(sc, at));
    cases.push_back(flipped(sc, size - 1));
    // Cut short and grown.
    const std::string bytes = test::bytes_of(sc.good);
    const std::string cut = (sc.dir / "cut.bundle").string(), grown = (sc.dir / "grown.bundle").string();
    std::ofstream(cut, std::ios::binary) << bytes.substr(0, bytes.size() - 512);
    std::ofstream(grown, std::ios::binary) << bytes << std::string(512, '\0');
    cases.push_back({"cut short by 512 bytes", cut, "truncated or extended"});
    cases.push_back({"grown by 512 bytes", grown, "truncated or extended"});
    // An unsigned SQLite file (a bundle of the format before signatures).
    const std::string plain = (sc.dir / "plain.sqlite").string();
    REQUIRE(unpack_bundle(sc.good, plain).ok());
    cases.push_back({"an unsigned SQLite bundle", plain, "not a signed Furrow bundle"});
  }
  CHECK(cases.size() >= 25);
  MESSAGE(cases.size() << " hostile bundles");
  const std::string before = test::bytes_of(sc.station);
  for (const Case& c : cases) {
    CAPTURE(c.name);
    auto st = open_trial_database(sc.station);
    REQUIRE(st.ok());
    auto out = merge_bundle(st->db, st->trial, c.path);
    REQUIRE_FALSE(out.ok());
    CAPTURE(out.problem().message);
    CHECK(out.problem().message.rfind(c.path + ": ", 0) == 0);
    CHECK(out.problem().message.find(c.expect) != std::string::npos);
    CHECK(test::bytes_of(sc.station) == before);
  }
  // The good bundles still merge, and B's after A's.
  auto st = open_trial_database(sc.station);
  REQUIRE(st.ok());
  auto a = merge_bundle(st->db, st->trial, sc.good);
  REQUIRE(a.ok());
  CHECK(a->observations_added == 3);
  auto b = merge_bundle(st->db, st->trial, sc.b_bundle);
  REQUIRE(b.ok());
  CHECK(b->observations_added == 1);
}

TEST_CASE("values agree as values: 5.5 and 5.50 on two devices are no conflict, 5.5 and 5.6 are one") {
  const Scenario sc = make_scenario();
  for (auto [db, v1, v2] : {std::tuple{sc.a, "5.5", "6"}, std::tuple{sc.b, "5.50", "6.0"}}) {
    auto s = RecordSession::open(db, "Crew");
    REQUIRE(s.ok());
    enter(*s, "201", "grain_yield_t_ha", v1);
    enter(*s, "202", "grain_yield_t_ha", v2);
  }
  {
    auto s = RecordSession::open(sc.a, "Crew");
    REQUIRE(s.ok());
    enter(*s, "203", "grain_yield_t_ha", "5.5");
  }
  {
    auto s = RecordSession::open(sc.b, "Crew");
    REQUIRE(s.ok());
    enter(*s, "203", "grain_yield_t_ha", "5.6");
  }
  for (const std::string& db : {sc.a, sc.b}) {
    auto open = open_trial_database(db);
    REQUIRE(open.ok());
    REQUIRE(write_bundle(open->db, open->trial, db + ".bundle").ok());
  }
  auto st = open_trial_database(sc.station);
  REQUIRE(st.ok());
  REQUIRE(merge_bundle(st->db, st->trial, sc.a + ".bundle").ok());
  REQUIRE(merge_bundle(st->db, st->trial, sc.b + ".bundle").ok());
  auto conflicts = list_conflicts(st->db, st->trial);
  REQUIRE(conflicts.ok());
  REQUIRE(conflicts->size() == 1);
  CHECK(st->trial.layout.plots[conflicts->front().plot_index].label == "203");
  // The database's own view agrees with the code.
  auto n = st->db.prepare("SELECT count(*) FROM conflict");
  REQUIRE(n.ok());
  REQUIRE(n->step());
  CHECK(n->integer(0) == 1);
}

}  // namespace
}  // namespace furrow
