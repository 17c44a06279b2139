// Device identity: keys made with each copy, enrolment at the station,
// revocation, station bundles only from the device's own station, and a
// cloned tablet file given a new identity with none of its rows lost.

#include <doctest/doctest.h>

#include <filesystem>
#include <fstream>
#include <map>
#include <algorithm>

#include "app/work/record_session.h"
#include "storage/bundle.h"
#include "storage/enrolment.h"
#include "storage/settle.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

namespace fs = std::filesystem;

void enter(const std::string& db, const std::string& plot, const std::string& value, const std::string& who = "Crew") {
  auto s = RecordSession::open(db, who);
  REQUIRE(s.ok());
  REQUIRE(s->set_trait("height_cm").ok());
  REQUIRE(s->jump_to(plot).ok());
  auto out = s->enter(value);
  if (out.kind == EntryOutcome::Kind::needs_confirmation) out = s->confirm();
  REQUIRE(out.kind == EntryOutcome::Kind::saved);
}

std::string bundle_of(const std::string& db, const std::string& out) {
  auto open = open_trial_database(db);
  REQUIRE(open.ok());
  REQUIRE(write_bundle(open->db, open->trial, out).ok());
  return out;
}

Result<MergeOutcome> merge(const std::string& db, const std::string& bundle) {
  auto open = open_trial_database(db);
  REQUIRE(open.ok());
  return merge_bundle(open->db, open->trial, bundle);
}

std::string device_id_of(const std::string& db) {
  auto open = open_trial_database(db);
  REQUIRE(open.ok());
  return open->trial.device_id;
}

struct Station {
  fs::path dir;
  std::string station, a, b;
};

Station make_station(const std::string& name) {
  Station s;
  s.dir = test::scratch_dir(name);
  fs::remove_all(s.dir);
  fs::create_directories(s.dir);
  s.station = (s.dir / "station.furrow").string();
  fs::copy_file(test::fresh_demo_trial(name + "_src.furrow"), s.station);
  s.a = (s.dir / "a.furrow").string();
  s.b = (s.dir / "b.furrow").string();
  REQUIRE(copy_trial_for_device(s.station, s.a, DeviceEnrolment{"Tablet A", "Mara Quill"}).ok());
  REQUIRE(copy_trial_for_device(s.station, s.b, DeviceEnrolment{"", "Mara Quill"}).ok());
  return s;
}

TEST_CASE("a copy is enrolled at the station with who, when and its key; the copy knows the station's key") {
  const Station s = make_station("identity_enrol");
  auto st = open_trial_database(s.station);
  REQUIRE(st.ok());
  auto list = list_enrolments(st->db);
  REQUIRE(list.ok());
  REQUIRE(list->size() == 3);   // the station itself, A and B
  auto a = open_trial_database(s.a);
  REQUIRE(a.ok());
  auto a_key = own_key(a->db);
  REQUIRE(a_key.ok());
  auto a_at_station = enrolment_of(st->db, a->trial.device_id);
  REQUIRE(a_at_station.ok());
  REQUIRE(a_at_station->has_value());
  CHECK((*a_at_station)->public_key == a_key->public_key);
  CHECK((*a_at_station)->label == "Tablet A");
  CHECK((*a_at_station)->enrolled_by == "Mara Quill");
  CHECK((*a_at_station)->enrolled_at.size() == 24);
  CHECK((*enrolment_of(st->db, device_id_of(s.b)))->label == "b");   // no label given: the file's name
  // The copy holds its station's public key, and its own key differs from every other.
  auto st_key = own_key(st->db);
  REQUIRE(st_key.ok());
  auto known = enrolment_by_key(a->db, st_key->public_key);
  REQUIRE(known.ok());
  REQUIRE(known->has_value());
  CHECK((*known)->role == "station");
  CHECK(a_key->public_key != st_key->public_key);
  CHECK(a_key->public_key != own_key(open_trial_database(s.b)->db)->public_key);
  // Nobody named: refused.
  CHECK_FALSE(copy_trial_for_device(s.station, (s.dir / "c.furrow").string(), DeviceEnrolment{"", ""}).ok());
  CHECK_FALSE(fs::exists(s.dir / "c.furrow"));
}

TEST_CASE("a revoked device's later bundles are refused; its rows merged before stay, marked") {
  const Station s = make_station("identity_revoke");
  enter(s.a, "101", "95");
  REQUIRE(merge(s.station, bundle_of(s.a, s.a + ".1.bundle")).ok());
  enter(s.a, "102", "94");
  const std::string later = bundle_of(s.a, s.a + ".2.bundle");
  const std::string a_id = device_id_of(s.a);
  {
    auto st = open_trial_database(s.station);
    REQUIRE(st.ok());
    REQUIRE(revoke_device(st->db, a_id, "Mara Quill", "tablet lost").ok());
    CHECK_FALSE(revoke_device(st->db, a_id, "Mara Quill", "again").ok());
    CHECK_FALSE(revoke_device(st->db, st->trial.device_id, "Mara Quill", "").ok());   // not the station itself
  }
  const std::string before = test::bytes_of(s.station);
  auto out = merge(s.station, later);
  REQUIRE_FALSE(out.ok());
  CHECK(out.problem().message.rfind(later + ": refused: device " + a_id + " (Tablet A) was revoked on ", 0) == 0);
  CHECK(test::bytes_of(s.station) == before);
  auto st = open_trial_database(s.station);
  REQUIRE(st.ok());
  auto records = device_records(st->db);
  REQUIRE(records.ok());
  const auto it = std::find_if(records->begin(), records->end(),
                               [&](const DeviceRecord& r) { return r.enrolment.device_id == a_id; });
  REQUIRE(it != records->end());
  CHECK(it->enrolment.revoked());
  CHECK(*it->enrolment.revoked_reason == "tablet lost");
  CHECK(it->rows_in_log == 1);
  CHECK(it->bundles_merged == 1);
  // B is not touched by A's revocation.
  enter(s.b, "103", "93");
  CHECK(merge(s.station, bundle_of(s.b, s.b + ".bundle")).ok());
}

TEST_CASE("a device takes station bundles signed by its own station only") {
  const Station s = make_station("identity_station_key");
  enter(s.station, "101", "96", "Station manager");
  const std::string good = bundle_of(s.station, (s.dir / "station.bundle").string());
  const std::string image = (s.dir / "station.sqlite").string();
  REQUIRE(unpack_bundle(good, image).ok());
  // The same content signed by another station (of another trial), and by device B.
  const std::string other_station = test::fresh_demo_trial("identity_other_station.furrow");
  const std::string by_other = (s.dir / "by_other_station.bundle").string();
  const std::string by_b = (s.dir / "by_b.bundle").string();
  REQUIRE(seal_bundle(image, other_station, by_other).ok());
  REQUIRE(seal_bundle(image, s.b, by_b).ok());
  const std::string before = test::bytes_of(s.a);
  for (const std::string& bundle : {by_other, by_b}) {
    CAPTURE(bundle);
    auto out = merge(s.a, bundle);
    REQUIRE_FALSE(out.ok());
    CHECK(out.problem().message.find(bundle + ": refused: it is not signed by this trial's station") == 0);
    CHECK(test::bytes_of(s.a) == before);
  }
  auto out = merge(s.a, good);
  REQUIRE(out.ok());
  CHECK(out->observations_added == 1);
}

TEST_CASE("a cloned tablet: the station merges the first, refuses the second in words, and after renewal holds every row") {
  const Station s = make_station("identity_clone");
  enter(s.a, "101", "95");
  enter(s.a, "102", "94");
  REQUIRE(merge(s.station, bundle_of(s.a, s.a + ".morning.bundle")).ok());
  // The file is copied to a second tablet; both go on recording as one device.
  const std::string clone = (s.dir / "clone.furrow").string();
  fs::copy_file(s.a, clone);
  enter(s.a, "103", "93");
  enter(s.a, "104", "92");
  enter(clone, "201", "91");
  enter(clone, "202", "90");
  enter(clone, "202", "89");   // an edit: replaces the clone's own row
  const std::string first = bundle_of(s.a, s.a + ".afternoon.bundle");
  const std::string second = bundle_of(clone, clone + ".afternoon.bundle");
  REQUIRE(merge(s.station, first).ok());
  const std::string before = test::bytes_of(s.station);
  auto refused = merge(s.station, second);
  REQUIRE_FALSE(refused.ok());
  const std::string& why = refused.problem().message;
  CAPTURE(why);
  CHECK(why.rfind(second + ": refused: row ", 0) == 0);
  CHECK(why.find("two tablets hold copies of one device's trial file") != std::string::npos);
  CHECK(why.find("furrow device renew") != std::string::npos);
  CHECK(test::bytes_of(s.station) == before);

  auto renewed = renew_device_identity(s.station, clone, DeviceEnrolment{"Tablet A2", "Mara Quill"});
  REQUIRE(renewed.ok());
  CHECK(renewed->old_device_id == device_id_of(s.a));
  CHECK(renewed->new_device_id != renewed->old_device_id);
  CHECK(renewed->kept_under_old_id == 2);   // the morning's rows, held by the station
  CHECK(renewed->rows_moved == 3);
  CHECK(fs::exists(renewed->kept_file));
  CHECK(device_id_of(clone) == renewed->new_device_id);
  auto again = merge(s.station, bundle_of(clone, clone + ".renewed.bundle"));
  REQUIRE(again.ok());
  CHECK(again->observations_added == 3);
  CHECK(again->replacements_added == 1);
  // Every row of both tablets is in the station: 101-104 from A, 201 and 202 (edited) from the clone.
  auto st = open_trial_database(s.station);
  REQUIRE(st.ok());
  auto live = live_observations(st->db, 0);
  REQUIRE(live.ok());
  std::map<std::string, std::string> value_of;
  for (const auto& r : *live) {
    for (size_t i = 0; i < st->trial.plot_ids.size(); ++i)
      if (st->trial.plot_ids[i] == r.plot_id) value_of[st->trial.layout.plots[i].label] = r.value.value_or("");
  }
  CHECK(value_of == std::map<std::string, std::string>{
                        {"101", "95"}, {"102", "94"}, {"103", "93"}, {"104", "92"}, {"201", "91"}, {"202", "89"}});
  auto all = all_observations(st->db);
  REQUIRE(all.ok());
  CHECK(all->size() == 7);
  // The renewed copy goes on: its next row follows on, and merges.
  enter(clone, "203", "88");
  auto next = merge(s.station, bundle_of(clone, clone + ".evening.bundle"));
  REQUIRE(next.ok());
  CHECK(next->observations_added == 1);
  // And the first tablet is untouched by it all.
  enter(s.a, "105", "87");
  CHECK(merge(s.station, bundle_of(s.a, s.a + ".evening.bundle")).ok());
}

TEST_CASE("a renewed device may undo its old id's rows the station held, and no others") {
  const Station s = make_station("identity_successor");
  enter(s.a, "101", "95");
  REQUIRE(merge(s.station, bundle_of(s.a, s.a + ".1.bundle")).ok());
  const std::string clone = (s.dir / "clone.furrow").string();
  fs::copy_file(s.a, clone);
  enter(s.a, "102", "94");
  REQUIRE(merge(s.station, bundle_of(s.a, s.a + ".2.bundle")).ok());
  enter(clone, "101", "99");   // the clone edits the shared row 1 (its own id's, held by the station)
  REQUIRE_FALSE(merge(s.station, bundle_of(clone, clone + ".1.bundle")).ok());
  auto renewed = renew_device_identity(s.station, clone, DeviceEnrolment{"", "Mara Quill"});
  REQUIRE(renewed.ok());
  CHECK(renewed->kept_under_old_id == 1);
  auto out = merge(s.station, bundle_of(clone, clone + ".2.bundle"));
  REQUIRE_MESSAGE(out.ok(), (out ? "" : out.problem().message));
  CHECK(out->replacements_added == 1);   // the new id's row replaces the old id's row 1
  // The renewed device's key may not replace the old id's row 2 (recorded after the copy, by the first tablet).
  const std::string image = (s.dir / "forged.sqlite").string();
  REQUIRE(unpack_bundle(clone + ".2.bundle", image).ok());
  {
    auto db = Database::create_standalone(image);
    REQUIRE(db.ok());
    REQUIRE(db->exec("INSERT INTO replacement VALUES ('" + renewed->new_device_id + "', 1, '" + renewed->old_device_id +
                     "', 2); UPDATE manifest SET value = '2' WHERE key = 'replacements'")
                .ok());
  }
  const std::string forged = (s.dir / "forged.bundle").string();
  REQUIRE(seal_bundle(image, clone, forged).ok());
  auto refused = merge(s.station, forged);
  REQUIRE_FALSE(refused.ok());
  CHECK(refused.problem().message.find("only the station settles") != std::string::npos);
}

TEST_CASE("a row held at the station keeps its links: a later bundle cannot add one") {
  const Station s = make_station("identity_links");
  {
    // Two rows of one cell with no link between them (as two entries on
    // different days, say), merged at the station.
    auto a = open_trial_database(s.a);
    REQUIRE(a.ok());
    for (const char* v : {"95", "96"}) {
      NewObservation o;
      o.plot_id = a->trial.plot_ids[0];
      o.trait_id = a->trial.trait_ids[1];
      o.value = v;
      o.number = std::stod(v);
      o.observer = "Ana";
      REQUIRE(append_observation(a->db, a->trial.device_id, o, utc_now()).ok());
    }
  }
  const std::string first = bundle_of(s.a, s.a + ".1.bundle");
  REQUIRE(merge(s.station, first).ok());
  const std::string image = (s.dir / "links.sqlite").string(), forged = (s.dir / "links.bundle").string();
  REQUIRE(unpack_bundle(first, image).ok());
  {
    auto db = Database::create_standalone(image);
    REQUIRE(db.ok());
    const std::string a_id = device_id_of(s.a);
    REQUIRE(db->exec("INSERT INTO replacement VALUES ('" + a_id + "', 2, '" + a_id + "', 1); "
                     "UPDATE manifest SET value = '1' WHERE key = 'replacements'").ok());
  }
  REQUIRE(seal_bundle(image, s.a, forged).ok());
  const std::string before = test::bytes_of(s.station);
  auto out = merge(s.station, forged);
  REQUIRE_FALSE(out.ok());
  CHECK(out.problem().message.find("a row's links cannot change after it is saved") != std::string::npos);
  CHECK(test::bytes_of(s.station) == before);
}

TEST_CASE("no text is saved that the station would refuse: the same limits at entry, settlement and merge") {
  const Station s = make_station("identity_limits");
  auto a = open_trial_database(s.a);
  REQUIRE(a.ok());
  NewObservation o;
  o.plot_id = a->trial.plot_ids[0];
  o.trait_id = a->trial.trait_ids[1];
  o.value = "95";
  o.number = 95;
  o.observer = "Ana";
  o.note = std::string(kMaxNoteBytes + 1, 'x');
  auto saved = append_observation(a->db, a->trial.device_id, o, utc_now());
  REQUIRE_FALSE(saved.ok());
  CHECK(saved.problem().message == "the note is longer than 2000 bytes (2001); shorten it; nothing was saved");
  o.note = "";
  o.observer = std::string(kMaxNameBytes + 1, 'B');
  CHECK_FALSE(append_observation(a->db, a->trial.device_id, o, utc_now()).ok());
  o.observer = "";
  CHECK_FALSE(append_observation(a->db, a->trial.device_id, o, utc_now()).ok());
  o.observer = "Ana";
  o.value.reset();
  o.number.reset();
  o.missing_reason = std::string(kMaxReasonBytes + 1, 'r');
  CHECK_FALSE(append_observation(a->db, a->trial.device_id, o, utc_now()).ok());
  auto all = all_observations(a->db);
  REQUIRE(all.ok());
  CHECK(all->empty());
  // At the longest allowed, it saves and the station merges it.
  o.missing_reason = std::string(kMaxReasonBytes, 'r');
  o.note = std::string(kMaxNoteBytes, 'n');
  o.observer = std::string(kMaxNameBytes, 'B');
  REQUIRE(append_observation(a->db, a->trial.device_id, o, utc_now()).ok());
  CHECK(merge(s.station, bundle_of(s.a, s.a + ".bundle")).ok());
}

TEST_CASE("a new identity is refused for a revoked device and for a copy whose plan was altered") {
  const Station s = make_station("identity_renew_refused");
  enter(s.a, "101", "95");
  REQUIRE(merge(s.station, bundle_of(s.a, s.a + ".1.bundle")).ok());
  const std::string altered = (s.dir / "altered.furrow").string();
  fs::copy_file(s.b, altered);
  {
    auto db = Database::open(altered, false);
    REQUIRE(db.ok());
    REQUIRE(db->exec("UPDATE plot SET label = '999' WHERE label = '101'").ok());
  }
  auto renewed = renew_device_identity(s.station, altered, DeviceEnrolment{"", "Mara Quill"});
  REQUIRE_FALSE(renewed.ok());
  CHECK(renewed.problem().message.find("holds a different plan") != std::string::npos);
  {
    auto st = open_trial_database(s.station);
    REQUIRE(st.ok());
    REQUIRE(revoke_device(st->db, device_id_of(s.a), "Mara Quill", "lost").ok());
  }
  const std::string enrolled_before = test::bytes_of(s.station);
  renewed = renew_device_identity(s.station, s.a, DeviceEnrolment{"", "Mara Quill"});
  REQUIRE_FALSE(renewed.ok());
  CHECK(renewed.problem().message.find("was revoked on") != std::string::npos);
  CHECK(test::bytes_of(s.station) == enrolled_before);
  CHECK_FALSE(fs::exists(s.a + ".renewing"));
}

TEST_CASE("a trial file whose views were edited, or whose seed is not a number, is refused in words") {
  const Station s = make_station("identity_altered_file");
  const std::string looping = (s.dir / "looping.furrow").string(), seeded = (s.dir / "seeded.furrow").string();
  fs::copy_file(s.a, looping);
  fs::copy_file(s.a, seeded);
  {
    auto db = Database::open(looping, false);
    REQUIRE(db.ok());
    REQUIRE(db->exec("DROP VIEW current_value; DROP VIEW conflict; DROP VIEW live_observation; "
                     "CREATE VIEW live_observation AS WITH RECURSIVE r(n) AS (SELECT 1 UNION ALL SELECT n + 1 FROM r) "
                     "SELECT * FROM observation, r")
                .ok());
  }
  {
    auto db = Database::open(seeded, false);
    REQUIRE(db.ok());
    REQUIRE(db->exec("UPDATE trial SET seed = 'x'").ok());
  }
  for (Access access : {Access::write, Access::read_only}) {
    auto open = open_trial_database(looping, access);
    REQUIRE_FALSE(open.ok());
    CHECK(open.problem().message == looping + ": its views or triggers are not Furrow's (the file was altered); nothing was read");
    open = open_trial_database(seeded, access);
    REQUIRE_FALSE(open.ok());
    CHECK(open.problem().message.find("seed 'x' is not a whole number") != std::string::npos);
  }
}

}  // namespace
}  // namespace furrow
