// Today's walk: its cells in the order a crew meets them, for both kinds of
// walk, with blocks chosen; and the Record session keeps it per trial.

#include "app/work/walk.h"

#include <doctest/doctest.h>

#include "app/work/record_session.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

TEST_CASE("one trait at a time: every plot of the chosen blocks in walking order, then the next trait") {
  auto open = open_trial_database(test::fresh_demo_trial("walk_order.furrow"));
  REQUIRE(open.ok());
  const StoredTrial& t = open->trial;
  const Walk w(t, WalkChoice{{"height_cm", "stand_count"}, 1, {2}, false});
  REQUIRE(w.plots().size() == 20);   // block 2 of the demo's 4 x 20
  CHECK(w.size() == 40);
  CHECK(w.at(0).trait == 1);
  CHECK(t.layout.plots[w.at(0).plot].block == 2);
  CHECK(w.at(19).trait == 1);
  CHECK(w.at(20).trait == 0);        // then stand count
  CHECK(w.at(20).plot == w.at(0).plot);
  for (size_t k = 1; k < 20; ++k) CHECK(w.at(k).plot > w.at(k - 1).plot);   // walking order
  // Moving along: at the end of height the walk goes on with stand count.
  CHECK(w.after(w.at(19), t.layout.plots.size()) == w.at(20));
  CHECK(w.before(w.at(20)) == w.at(19));
  CHECK_FALSE(w.after(w.at(39), t.layout.plots.size()).has_value());
  CHECK_FALSE(w.before(w.at(0)).has_value());
  // A plot outside the walk: the next plot in walking order, same trait.
  CHECK(w.after(WalkCell{0, 1, 1}, t.layout.plots.size()) == WalkCell{1, 1, 1});
  CHECK(w.describe(t) == "plant height, plants per plot; block 2; one trait at a time");
}

TEST_CASE("every trait per plot: all chosen traits on a plot before the next; unknown codes and blocks are left out") {
  auto open = open_trial_database(test::fresh_demo_trial("walk_per_plot.furrow"));
  REQUIRE(open.ok());
  const StoredTrial& t = open->trial;
  const Walk w(t, WalkChoice{{"stand_count", "nonsense", "height_cm"}, 3, {1, 9}, true});
  CHECK(w.traits().size() == 2);
  CHECK(w.blocks() == std::vector<int>{1});
  CHECK(w.occasion_for(0) == 1);     // a one-occasion trait is walked at its only occasion
  CHECK(w.at(0).plot == w.at(1).plot);
  CHECK(w.at(0).trait == 0);
  CHECK(w.at(1).trait == 1);
  CHECK(w.at(2).plot != w.at(0).plot);
  // No trait left: the first trait, so that a walk is never empty.
  const Walk empty(t, WalkChoice{});
  CHECK(empty.traits() == std::vector<size_t>{0});
  CHECK(empty.size() == 80);
}

TEST_CASE("the session keeps the walk in the trial file, opens at its first cell without a value and counts it") {
  const std::string db = test::demo_day_trial("walk_session.furrow");
  {
    auto s = RecordSession::open(db, "Ana");
    REQUIRE(s.ok());
    REQUIRE(s->set_walk(WalkChoice{{"heading_days"}, 1, {}, false}).ok());
    CHECK(s->view().plot_label == "101");
    CHECK(s->view().trait_code == "heading_days");
    for (int i = 0; i < 3; ++i) REQUIRE(s->enter("60").kind == EntryOutcome::Kind::saved);
    CHECK(s->view().trait_done == 3);
    CHECK(s->view().trait_total == 80);
    CHECK(s->view().walk_position == 4);
    CHECK_FALSE(s->set_walk(WalkChoice{{"nonsense"}, 1, {}, false}).ok());
  }
  auto again = RecordSession::open(db, "Ana");
  REQUIRE(again.ok());
  CHECK(again->view().walk_summary == "days to heading; every block");
  CHECK(again->view().walk_position == 4);   // the first plot of the walk without a value
  CHECK(again->view().trait_code == "heading_days");
}

}  // namespace
}  // namespace furrow
