// The Before leaving list changes as problems are fixed.

#include "app/work/before_leaving.h"

#include <doctest/doctest.h>

#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>

#include "app/work/record_session.h"
#include "storage/plan_file.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

std::string demo_day(const std::string& name) { return test::demo_day_trial(name); }

int count_for(const BeforeLeaving& b, LeavingItem::Kind kind, const StoredTrial& t, const std::string& plot) {
  int n = 0;
  for (const auto& i : b.items)
    if (i.has(kind) && t.layout.plots[i.plot_index].label == plot) ++n;
  return n;
}
int lines_for(const BeforeLeaving& b, const StoredTrial& t, const std::string& plot) {
  int n = 0;
  for (const auto& i : b.items) n += t.layout.plots[i.plot_index].label == plot;
  return n;
}
Walk walk_of(const StoredTrial& t, std::vector<std::string> traits) { return Walk(t, WalkChoice{std::move(traits), 1, {}, false}); }

TEST_CASE("a walk of height on every plot: the outlier on 307 once, nothing outside the walk listed line by line") {
  const std::string db = demo_day("list.furrow");
  auto open = open_trial_database(db);
  REQUIRE(open.ok());
  const auto live = live_observations(open->db, 0);
  const BeforeLeaving b = before_leaving(open->trial, *live, 0.05, walk_of(open->trial, {"height_cm"}));
  // 307's 8.3 was confirmed at entry against the slip warning: the entry
  // check's question is answered; the analysis's outlier is a new question.
  CHECK(count_for(b, LeavingItem::Kind::outlier, open->trial, "307") == 1);
  CHECK(count_for(b, LeavingItem::Kind::flagged, open->trial, "307") == 0);
  CHECK(lines_for(b, open->trial, "307") == 1);
  CHECK(b.missing == 0);                 // every height recorded (214 skipped as flooded counts)
  for (const auto& item : b.items) CHECK(item.trait_index == 1);   // height only
  // Heading, lodging and yield (3 x 80 required values) are one line, not 240.
  CHECK(b.outside_walk.find("240 required values not recorded yet") != std::string::npos);
  CHECK(b.conflicts == 0);
}

TEST_CASE("a plot with two findings is one line with both; a walk of blocks 1-2 lists only their plots") {
  const std::string db = demo_day("two.furrow");
  auto open = open_trial_database(db);
  REQUIRE(open.ok());
  auto live = live_observations(open->db, 0);
  // An unconfirmed slip: flagged by the entry check and an outlier.
  NewObservation slip;
  slip.plot_id = open->trial.plot_ids[5];
  slip.trait_id = open->trial.trait_ids[1];
  slip.value = "9.1";
  slip.number = 9.1;
  slip.observer = "Tobi";
  for (const auto& x : *live)
    if (x.plot_id == slip.plot_id && x.trait_id == slip.trait_id) slip.replaces.push_back(x.key);
  REQUIRE(append_observation(open->db, open->trial.device_id, slip, utc_now()).ok());
  live = live_observations(open->db, 0);
  const std::string label = open->trial.layout.plots[5].label;
  const BeforeLeaving b = before_leaving(open->trial, *live, 0.05, walk_of(open->trial, {"height_cm"}));
  CHECK(count_for(b, LeavingItem::Kind::flagged, open->trial, label) == 1);
  CHECK(count_for(b, LeavingItem::Kind::outlier, open->trial, label) == 1);
  CHECK(lines_for(b, open->trial, label) == 1);
  WalkChoice heading{{"heading_days"}, 1, {1, 2}, false};
  const BeforeLeaving h = before_leaving(open->trial, *live, 0.05, Walk(open->trial, heading));
  for (const auto& item : h.items) CHECK(open->trial.layout.plots[item.plot_index].block <= 2);
}

TEST_CASE("re-measuring, confirming and settling take items off the list") {
  const std::string db = demo_day("fix.furrow");
  const Walk height = [&] {
    auto open = open_trial_database(db);
    return walk_of(open->trial, {"height_cm", "stand_count"});
  }();
  {
    auto s = RecordSession::open(db, "Mara");
    REQUIRE(s.ok());
    s->set_trait(1);
    REQUIRE(s->jump_to("307").ok());
    REQUIRE(s->confirm_saved(kOutlierCheck).ok());   // "Value is right"
  }
  {
    auto open = open_trial_database(db);
    REQUIRE(open.ok());
    auto live = live_observations(open->db, 0);
    BeforeLeaving b = before_leaving(open->trial, *live, 0.05, height);
    CHECK(lines_for(b, open->trial, "307") == 0);
  }
  {
    auto s = RecordSession::open(db, "Mara");
    REQUIRE(s.ok());
    s->set_trait(1);
    REQUIRE(s->jump_to("307").ok());
    REQUIRE(s->enter("83").kind == EntryOutcome::Kind::saved);   // re-measured
  }
  auto open = open_trial_database(db);
  REQUIRE(open.ok());
  auto live = live_observations(open->db, 0);
  BeforeLeaving b = before_leaving(open->trial, *live, 0.05, height);
  CHECK(count_for(b, LeavingItem::Kind::flagged, open->trial, "307") == 0);
  CHECK(count_for(b, LeavingItem::Kind::outlier, open->trial, "307") == 0);
  // Another device disagrees on plot 101's stand count: a conflict.
  NewObservation other;
  other.plot_id = open->trial.plot_ids[0];
  other.trait_id = open->trial.trait_ids[0];
  other.value = "231";
  other.number = 231;
  other.observer = "Tobi";
  const auto k = append_observation(open->db, "00000000000000b2", other, utc_now());
  REQUIRE(k.ok());
  live = live_observations(open->db, 0);
  b = before_leaving(open->trial, *live, 0.05, height);
  CHECK(b.conflicts == 1);
  REQUIRE(!b.items.empty());
  CHECK(b.items.front().has(LeavingItem::Kind::conflict));   // conflicts first
  // Settled: one row replacing both.
  NewObservation settle = other;
  for (const auto& x : *live)
    if (x.plot_id == other.plot_id && x.trait_id == other.trait_id) settle.replaces.push_back(x.key);
  REQUIRE(append_observation(open->db, open->trial.device_id, settle, utc_now()).ok());
  live = live_observations(open->db, 0);
  b = before_leaving(open->trial, *live, 0.05, height);
  CHECK(b.conflicts == 0);
}

}  // namespace
}  // namespace furrow
