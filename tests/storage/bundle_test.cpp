// Day's end: ten devices collect one trial with overlapping plots, edits and
// undos; their bundles merged into the station in many random orders, with
// repeats, always give the same log, lose no observation and list every
// conflict. Refused bundles leave the station byte for byte as it was.

#include "storage/bundle.h"

#include <doctest/doctest.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <map>
#include <random>
#include <set>
#include <sstream>

#include "app/work/record_session.h"
#include "storage/plan_file.h"
#include "storage/settle.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

namespace fs = std::filesystem;


fs::path fresh_dir(const std::string& name) {
  const fs::path d = test::scratch_dir(name);
  fs::remove_all(d);
  fs::create_directories(d);
  return d;
}

// Enters a value through the record session as a crew would, confirming
// when the checks ask.
void enter(RecordSession& s, const std::string& plot, size_t trait, const std::string& value) {
  s.set_trait(trait);
  REQUIRE(s.jump_to(plot).ok());
  auto out = s.enter(value);
  if (out.kind == EntryOutcome::Kind::needs_confirmation) out = s.confirm();
  REQUIRE(out.kind == EntryOutcome::Kind::saved);
}

struct Day {
  fs::path dir;
  std::string station;                 // the station before any merge
  std::vector<std::string> devices;
  std::vector<std::string> bundles;    // every device bundle of the day
  std::string station_bundle;          // the station's midday bundle, taken by devices 0-4
  std::string station_device;          // the station's device id
  std::string working;                 // the station as it merged and settled at midday
};

// Ten devices, two rounds of collecting, a midday merge with settlements
// that five devices take back before the afternoon.
Day simulate_day() {
  Day d;
  d.dir = fresh_dir("furrow_bundle_day");
  d.station = (d.dir / "station.furrow").string();
  fs::copy_file(test::fresh_demo_trial("bundle_station_src.furrow"), d.station);
  for (int i = 0; i < 10; ++i) {
    d.devices.push_back((d.dir / ("device" + std::to_string(i) + ".furrow")).string());
    REQUIRE(copy_trial_for_device(d.station, d.devices.back(), DeviceEnrolment{"", "Test manager"}).ok());
  }
  auto labels = [&] {
    auto open = open_trial_database(d.station);
    REQUIRE(open.ok());
    std::vector<std::string> out;
    for (const auto& p : open->trial.layout.plots) out.push_back(p.label);
    return out;
  }();
  std::mt19937 rng(20261201);
  auto round = [&](int first_plot_offset, int round_no) {
    for (int i = 0; i < 10; ++i) {
      auto s = RecordSession::open(d.devices[i], "crew " + std::to_string(i));
      REQUIRE(s.ok());
      // Each device walks 14 plots; neighbours overlap on 6 of them.
      for (int k = 0; k < 14; ++k) {
        const std::string& plot = labels[(first_plot_offset + i * 8 + k) % labels.size()];
        // Devices agree on even plots of the overlap, disagree on odd ones.
        const int base = 90 + static_cast<int>((first_plot_offset + i * 8 + k) % 30);
        const int height = (k >= 8 && k % 2) ? base + 1 + i % 3 : base;
        enter(*s, plot, 1, std::to_string(height));
        enter(*s, plot, 0, std::to_string(200 + static_cast<int>(rng() % 100)));
      }
      // Two edits and one undo per device and round.
      enter(*s, labels[(first_plot_offset + i * 8) % labels.size()], 1, std::to_string(100 + round_no));
      enter(*s, labels[(first_plot_offset + i * 8 + 1) % labels.size()], 0, "250");
      REQUIRE(s->undo().ok());
    }
  };
  auto bundle_all = [&](const std::string& tag) {
    for (int i = 0; i < 10; ++i) {
      auto open = open_trial_database(d.devices[i]);
      REQUIRE(open.ok());
      const std::string out = (d.dir / (tag + std::to_string(i) + ".bundle")).string();
      REQUIRE(write_bundle(open->db, open->trial, out).ok());
      d.bundles.push_back(out);
    }
  };
  round(0, 1);
  bundle_all("morning");
  // Midday: the station merges the morning, settles three conflicts three
  // ways and sends its state to devices 0-4.
  d.working = (d.dir / "working_station.furrow").string();
  fs::copy_file(d.station, d.working);
  {
    auto st = open_trial_database(d.working);
    REQUIRE(st.ok());
    for (size_t i = 0; i < 10; ++i) REQUIRE(merge_bundle(st->db, st->trial, d.bundles[i]).ok());
    auto conflicts = list_conflicts(st->db, st->trial);
    REQUIRE(conflicts.ok());
    REQUIRE(conflicts->size() >= 3);
    Settlement keep;
    keep.kind = Settlement::Kind::keep;
    keep.keep = (*conflicts)[0].rows.back().key;
    keep.by = "Station manager";
    REQUIRE(settle_conflict(st->db, st->trial, (*conflicts)[0], keep).ok());
    Settlement fresh;
    fresh.kind = Settlement::Kind::new_value;
    fresh.value = "104";
    fresh.number = 104;
    fresh.by = "Station manager";
    REQUIRE(settle_conflict(st->db, st->trial, (*conflicts)[1], fresh).ok());
    Settlement gone;
    gone.kind = Settlement::Kind::missing;
    gone.missing_reason = "plot damaged";
    gone.by = "Station manager";
    REQUIRE(settle_conflict(st->db, st->trial, (*conflicts)[2], gone).ok());
    const std::string out = (d.dir / "midday_station.bundle").string();
    REQUIRE(write_bundle(st->db, st->trial, out).ok());
    d.station_bundle = out;   // for devices: a station takes bundles from devices only
    d.station_device = st->trial.device_id;
  }
  for (int i = 0; i < 5; ++i) {
    auto dev = open_trial_database(d.devices[i]);
    REQUIRE(dev.ok());
    REQUIRE(merge_bundle(dev->db, dev->trial, d.station_bundle).ok());
  }
  round(40, 2);
  bundle_all("afternoon");
  return d;
}

std::set<std::pair<std::string, std::int64_t>> keys_of(const std::string& path) {
  auto open = open_trial_database(path);
  REQUIRE(open.ok());
  auto all = all_observations(open->db);
  REQUIRE(all.ok());
  std::set<std::pair<std::string, std::int64_t>> out;
  for (const auto& o : *all) out.insert({o.key.device_id, o.key.sequence});
  return out;
}

TEST_CASE("ten devices: any merge order, with repeats, gives one log; nothing lost; every conflict listed") {
  const Day d = simulate_day();
  REQUIRE(d.bundles.size() == 20);
  // Every observation any device made (the midday settlements are the working
  // station's own, in no device bundle: a station takes device bundles only).
  std::set<std::pair<std::string, std::int64_t>> expected;
  for (const auto& p : d.devices) {
    const auto k = keys_of(p);
    for (const auto& key : k)
      if (key.first != d.station_device) expected.insert(key);
  }

  // Devices 0-4 took the station's state: the afternoon bundles leave out
  // what the station already held.
  {
    auto b0 = read_bundle_manifest(d.bundles[11]);   // device 0, afternoon
    auto b5 = read_bundle_manifest(d.bundles[16]);   // device 5, afternoon (never synced)
    REQUIRE(b0.ok());
    REQUIRE(b5.ok());
    CHECK(b0->observations < b5->observations);
  }

  std::mt19937 rng(7);
  std::string first_log;
  std::vector<std::string> first_conflicts;
  for (int trial_no = 0; trial_no < 12; ++trial_no) {
    std::vector<std::string> order = d.bundles;
    for (int r = 0; r < 6; ++r) order.push_back(d.bundles[rng() % d.bundles.size()]);   // repeats
    std::shuffle(order.begin(), order.end(), rng);
    const std::string path = (d.dir / ("merged" + std::to_string(trial_no) + ".furrow")).string();
    fs::copy_file(d.station, path);
    auto st = open_trial_database(path);
    REQUIRE(st.ok());
    // A bundle whose device's earlier rows have not arrived yet is refused
    // for the gap (sequences follow on, rule in bundle.h) and merges once they
    // have: the station takes it again later, as its import does.
    std::vector<std::string> waiting;
    for (const auto& b : order) {
      auto out = merge_bundle(st->db, st->trial, b);
      CAPTURE(b);
      if (!out.ok()) {
        REQUIRE_MESSAGE(out.problem().message.find("gap") != std::string::npos, out.problem().message);
        waiting.push_back(b);
      }
    }
    for (size_t round = 0; !waiting.empty(); ++round) {
      REQUIRE(round < 20);
      std::vector<std::string> still;
      for (const auto& b : waiting)
        if (!merge_bundle(st->db, st->trial, b).ok()) still.push_back(b);
      REQUIRE(still.size() < waiting.size());   // each round takes at least one
      waiting = still;
    }
    auto log = canonical_log(st->db);
    REQUIRE(log.ok());
    auto conflicts = list_conflicts(st->db, st->trial);
    REQUIRE(conflicts.ok());
    std::vector<std::string> cells;
    for (const auto& c : *conflicts)
      cells.push_back(st->trial.layout.plots[c.plot_index].label + "/" + st->trial.plan.traits[c.trait_index].code);
    if (trial_no == 0) {
      first_log = *log;
      first_conflicts = cells;
      CHECK(keys_of(path) == expected);
      CHECK(cells.size() >= 10);
      MESSAGE(cells.size() << " conflicts, " << expected.size() << " observations");
    } else {
      CHECK(*log == first_log);
      CHECK(cells == first_conflicts);
    }
  }

  // The conflicts, worked out here from the raw union: live rows are rows no
  // link replaces; a cell is in conflict when its live rows disagree.
  {
    auto st = open_trial_database((d.dir / "merged0.furrow").string());
    REQUIRE(st.ok());
    auto all = all_observations(st->db);
    REQUIRE(all.ok());
    std::set<std::pair<std::string, std::int64_t>> replaced;
    auto links = st->db.prepare("SELECT replaced_device_id, replaced_sequence FROM replacement");
    REQUIRE(links.ok());
    while (links->step()) replaced.insert({links->text(0), links->integer(1)});
    std::map<std::tuple<std::int64_t, std::int64_t, int>, std::set<std::string>> cells;
    for (const auto& o : *all)
      if (!replaced.count({o.key.device_id, o.key.sequence}))
        cells[{o.plot_id, o.trait_id, o.occasion}].insert(o.value.value_or("missing: " + o.missing_reason.value_or("")));
    std::map<std::int64_t, std::string> label, code;
    for (size_t i = 0; i < st->trial.plot_ids.size(); ++i) label[st->trial.plot_ids[i]] = st->trial.layout.plots[i].label;
    for (size_t k = 0; k < st->trial.trait_ids.size(); ++k) code[st->trial.trait_ids[k]] = st->trial.plan.traits[k].code;
    std::set<std::string> disagreeing;
    for (const auto& [cell, values] : cells)
      if (values.size() > 1) disagreeing.insert(label[std::get<0>(cell)] + "/" + code[std::get<1>(cell)]);
    CHECK(disagreeing == std::set<std::string>(first_conflicts.begin(), first_conflicts.end()));
    CHECK(disagreeing.size() == first_conflicts.size());
  }
}

TEST_CASE("a device that takes the station's bundle sees the settled values") {
  const fs::path dir = fresh_dir("furrow_bundle_settled");
  const std::string station = (dir / "station.furrow").string();
  fs::copy_file(test::fresh_demo_trial("bundle_settled_src.furrow"), station);
  const std::string a = (dir / "a.furrow").string(), b = (dir / "b.furrow").string();
  REQUIRE(copy_trial_for_device(station, a, DeviceEnrolment{"", "Test manager"}).ok());
  REQUIRE(copy_trial_for_device(station, b, DeviceEnrolment{"", "Test manager"}).ok());
  {
    auto sa = RecordSession::open(a, "Ana");
    auto sb = RecordSession::open(b, "Ben");
    REQUIRE(sa.ok());
    REQUIRE(sb.ok());
    enter(*sa, "101", 1, "96");
    enter(*sb, "101", 1, "69");
  }
  for (const auto& dev : {a, b}) {
    auto open = open_trial_database(dev);
    REQUIRE(open.ok());
    REQUIRE(write_bundle(open->db, open->trial, dev + ".bundle").ok());
  }
  auto st = open_trial_database(station);
  REQUIRE(st.ok());
  REQUIRE(merge_bundle(st->db, st->trial, a + ".bundle").ok());
  REQUIRE(merge_bundle(st->db, st->trial, b + ".bundle").ok());
  auto conflicts = list_conflicts(st->db, st->trial);
  REQUIRE(conflicts.ok());
  REQUIRE(conflicts->size() == 1);
  Settlement s;
  s.kind = Settlement::Kind::new_value;
  s.value = "96";
  s.number = 96;
  s.by = "Station manager";
  s.note = "re-measured";
  REQUIRE(settle_conflict(st->db, st->trial, conflicts->front(), s).ok());
  // Settling again is refused: the cell is no longer in conflict.
  CHECK_FALSE(settle_conflict(st->db, st->trial, conflicts->front(), s).ok());
  REQUIRE(write_bundle(st->db, st->trial, station + ".bundle").ok());
  auto dev = open_trial_database(b);
  REQUIRE(dev.ok());
  REQUIRE(merge_bundle(dev->db, dev->trial, station + ".bundle").ok());
  auto live = live_observations(dev->db, dev->trial.trait_ids[1]);
  REQUIRE(live.ok());
  REQUIRE(live->size() == 1);
  CHECK(*live->front().value == "96");
  CHECK(live->front().observer == "Station manager");
  CHECK(live->front().key.device_id == st->trial.device_id);
  CHECK(live->front().note == "settled: new value; re-measured");
}

TEST_CASE("refused bundles name the file and the reason and leave the station byte for byte as it was") {
  const fs::path dir = fresh_dir("furrow_bundle_refused");
  const std::string station = (dir / "station.furrow").string();
  fs::copy_file(test::fresh_demo_trial("bundle_refused_src.furrow"), station);
  const std::string device = (dir / "device.furrow").string();
  REQUIRE(copy_trial_for_device(station, device, DeviceEnrolment{"", "Test manager"}).ok());
  {
    auto s = RecordSession::open(device, "Ana");
    REQUIRE(s.ok());
    for (const char* plot : {"101", "102", "103", "104", "105", "106"}) enter(*s, plot, 1, "95");
  }
  const std::string good = (dir / "good.bundle").string();
  {
    auto open = open_trial_database(device);
    REQUIRE(open.ok());
    REQUIRE(write_bundle(open->db, open->trial, good).ok());
  }
  struct Case {
    std::string name, path, expect;
  };
  std::vector<Case> cases;
  // Another trial (its own uid).
  {
    const std::string other = (dir / "other.furrow").string();
    fs::copy_file(test::fresh_demo_trial("bundle_other_src.furrow"), other);
    auto open = open_trial_database(other);
    REQUIRE(open.ok());
    const std::string out = (dir / "other_trial.bundle").string();
    REQUIRE(write_bundle(open->db, open->trial, out).ok());
    cases.push_back({"another trial's station", out, "has not enrolled"});
  }
  // The station's own device, signing a manifest naming another trial or
  // another plan (what whoever holds its file can do).
  for (auto [key, value, expect] : {std::tuple{"trial_uid", "0123456789abcdef0123456789abcdef", "does not hold"},
                                    std::tuple{"plan_hash", "00ff", "different plan"}}) {
    const std::string image = (dir / (std::string(key) + ".sqlite")).string();
    const std::string out = (dir / (std::string(key) + ".bundle")).string();
    REQUIRE(unpack_bundle(good, image).ok());
    {
      auto db = Database::create_standalone(image);
      REQUIRE(db.ok());
      REQUIRE(db->exec(std::string("UPDATE manifest SET value = '") + value + "' WHERE key = '" + key + "'").ok());
    }
    REQUIRE(seal_bundle(image, device, out).ok());
    cases.push_back({std::string("a manifest naming another ") + key, out, expect});
  }
  // The same trial, another plan (one trait's limit changed).
  {
    auto st = open_trial_database(station);
    REQUIRE(st.ok());
    TrialPlan plan = st->trial.plan;
    plan.traits[1].hard_max = 400;
    const std::string changed = (dir / "changed_plan.furrow").string();
    REQUIRE(create_trial_database(changed, plan, st->trial.layout, {st->trial.uid, "device"}).ok());
    auto open = open_trial_database(changed);
    REQUIRE(open.ok());
    const std::string out = (dir / "changed_plan.bundle").string();
    REQUIRE(write_bundle(open->db, open->trial, out).ok());
    cases.push_back({"a different plan (a file the station never enrolled)", out, "has not enrolled"});
  }
  // A value altered after the bundle was written (its signature kept), and
  // a row removed by its own device (signed again with the device's key) with
  // the manifest's count left alone.
  {
    const std::string image = (dir / "altered.sqlite").string(), out = (dir / "altered.bundle").string();
    REQUIRE(unpack_bundle(good, image).ok());
    {
      auto db = Database::create_standalone(image);
      REQUIRE(db.ok());
      REQUIRE(db->exec("UPDATE observation SET value = '59' WHERE sequence = 3").ok());
    }
    std::string bytes = test::bytes_of(good).substr(0, 112), body = test::bytes_of(image);
    for (int i = 0; i < 8; ++i) bytes += static_cast<char>((body.size() >> (8 * i)) & 0xFF);
    std::ofstream(out, std::ios::binary) << bytes << body;
    cases.push_back({"altered", out, "signature does not match"});
  }
  {
    const std::string image = (dir / "row_removed.sqlite").string(), out = (dir / "row_removed.bundle").string();
    REQUIRE(unpack_bundle(good, image).ok());
    {
      auto db = Database::create_standalone(image);
      REQUIRE(db.ok());
      REQUIRE(db->exec("DELETE FROM observation WHERE sequence = 6").ok());
    }
    REQUIRE(seal_bundle(image, device, out).ok());
    cases.push_back({"a row removed", out, "manifest says"});
  }
  // Truncated halfway, and to its first page.
  for (const double keep : {0.5, 0.25}) {
    const std::string out = (dir / ("truncated" + std::to_string(keep) + ".bundle")).string();
    const std::string all = test::bytes_of(good);
    std::ofstream(out, std::ios::binary) << all.substr(0, static_cast<size_t>(all.size() * keep));
    cases.push_back({"truncated", out, ""});
  }
  {
    const std::string out = (dir / "text.bundle").string();
    std::ofstream(out) << "plot,height\n101,95\n";
    cases.push_back({"a text file", out, "not a Furrow bundle"});
    const std::string empty = (dir / "empty.bundle").string();
    std::ofstream(empty).close();
    cases.push_back({"an empty file", empty, "not a Furrow bundle"});
    cases.push_back({"a trial database", device, "not a signed Furrow bundle"});
    cases.push_back({"no such file", (dir / "missing.bundle").string(), "cannot be read"});
  }
  const std::string before = test::bytes_of(station);
  for (const Case& c : cases) {
    CAPTURE(c.name);
    {
      auto st = open_trial_database(station);
      REQUIRE(st.ok());
      auto out = merge_bundle(st->db, st->trial, c.path);
      REQUIRE_FALSE(out.ok());
      CAPTURE(out.problem().message);
      CHECK(out.problem().message.rfind(c.path + ": ", 0) == 0);
      CHECK(out.problem().message.find(c.expect) != std::string::npos);
    }
    CHECK(test::bytes_of(station) == before);
    CHECK_FALSE(fs::exists(station + "-wal"));
  }
  // And the good bundle still merges afterwards.
  auto st = open_trial_database(station);
  REQUIRE(st.ok());
  auto out = merge_bundle(st->db, st->trial, good);
  REQUIRE(out.ok());
  CHECK(out->observations_added == 6);
}

TEST_CASE("the plan hash is the same for every copy of a trial and changes with the plan") {
  const fs::path dir = fresh_dir("furrow_bundle_hash");
  const std::string station = (dir / "station.furrow").string();
  fs::copy_file(test::fresh_demo_trial("bundle_hash_src.furrow"), station);
  REQUIRE(copy_trial_for_device(station, (dir / "device.furrow").string(), DeviceEnrolment{"", "Test manager"}).ok());
  auto a = open_trial_database(station);
  auto b = open_trial_database((dir / "device.furrow").string());
  REQUIRE(a.ok());
  REQUIRE(b.ok());
  CHECK(a->trial.uid.size() == 32);
  CHECK(a->trial.uid == b->trial.uid);
  CHECK(a->trial.device_id != b->trial.device_id);
  CHECK(a->trial.role == "station");
  CHECK(b->trial.role == "device");
  CHECK(plan_hash(a->trial) == plan_hash(b->trial));
  StoredTrial changed = a->trial;
  std::swap(changed.layout.plots[0].levels, changed.layout.plots[1].levels);
  CHECK(plan_hash(changed) != plan_hash(a->trial));
}

}  // namespace
}  // namespace furrow
