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
    if (i.kind == kind && t.layout.plots[i.plot_index].label == plot) ++n;
  return n;
}

TEST_CASE("the demo day lists the slip as flagged and outlier, untouched traits as missing, not the flooded plot") {
  const std::string db = demo_day("list.furrow");
  auto open = open_trial_database(db);
  REQUIRE(open.ok());
  const auto live = live_observations(open->db, 0);
  const BeforeLeaving b = before_leaving(open->trial, *live, 0.05);
  CHECK(b.missing == 3 * 80);            // heading, lodging and yield not walked yet
  CHECK(count_for(b, LeavingItem::Kind::flagged, open->trial, "307") == 1);
  CHECK(count_for(b, LeavingItem::Kind::outlier, open->trial, "307") == 1);
  CHECK(count_for(b, LeavingItem::Kind::missing, open->trial, "214") == 3);   // skipped traits are accounted
  CHECK(b.conflicts == 0);
}

TEST_CASE("re-measuring, confirming and settling take items off the list") {
  const std::string db = demo_day("fix.furrow");
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
  BeforeLeaving b = before_leaving(open->trial, *live, 0.05);
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
  b = before_leaving(open->trial, *live, 0.05);
  CHECK(b.conflicts == 1);
  // Settled: one row replacing both.
  NewObservation settle = other;
  for (const auto& x : *live)
    if (x.plot_id == other.plot_id && x.trait_id == other.trait_id) settle.replaces.push_back(x.key);
  REQUIRE(append_observation(open->db, open->trial.device_id, settle, utc_now()).ok());
  live = live_observations(open->db, 0);
  b = before_leaving(open->trial, *live, 0.05);
  CHECK(b.conflicts == 0);
}

}  // namespace
}  // namespace furrow
