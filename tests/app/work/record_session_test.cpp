// The Record screen's state and commands, driven headlessly on the demo plan.

#include "app/work/record_session.h"

#include <doctest/doctest.h>

#include "core/stake_code.h"
#include "tests/test_support.h"

#include <filesystem>

#include "storage/plan_file.h"

namespace furrow {
namespace {

size_t live_count(const std::string& path) {
  auto open = open_trial_database(path);
  REQUIRE(open.ok());
  return live_observations(open->db, 0)->size();
}

TEST_CASE("an accepted value is committed, the walk moves on, the database holds it") {
  const std::string db = test::fresh_demo_trial("enter.furrow");
  auto s = RecordSession::open(db, "Ana");
  REQUIRE(s.ok());
  REQUIRE(s->set_walk(WalkChoice{{"height_cm"}, 1, {}, false}).ok());   // today: height on every plot
  CHECK(s->view().plot_label == "101");
  CHECK(s->view().trait_code == "height_cm");
  const auto out = s->enter("95");
  CHECK(out.kind == EntryOutcome::Kind::saved);
  CHECK(s->view().plot_label == "102");
  CHECK(s->view().trait_done == 1);
  CHECK(s->view().trait_total == 80);
  CHECK(live_count(db) == 1);
  s->previous();
  CHECK(*s->view().current == "95");
}

TEST_CASE("a refused value saves nothing; a soft-limit value waits for confirmation") {
  const std::string db = test::fresh_demo_trial("refuse.furrow");
  auto s = RecordSession::open(db, "Ana");
  REQUIRE(s.ok());
  s->set_trait(1);
  auto out = s->enter("400");
  CHECK(out.kind == EntryOutcome::Kind::refused);
  CHECK(out.message.find("possible range") != std::string::npos);
  CHECK(live_count(db) == 0);
  out = s->enter("150");
  CHECK(out.kind == EntryOutcome::Kind::needs_confirmation);
  CHECK(s->view().has_pending);
  CHECK(live_count(db) == 0);
  CHECK(s->view().plot_label == "101");
  out = s->confirm();
  CHECK(out.kind == EntryOutcome::Kind::saved);
  CHECK(live_count(db) == 1);
}

TEST_CASE("skip with a reason, jump by label, undo as a new log row") {
  const std::string db = test::fresh_demo_trial("skip.furrow");
  auto s = RecordSession::open(db, "Ana");
  REQUIRE(s.ok());
  CHECK_FALSE(s->skip("other", "").ok());   // 'other' needs a note
  REQUIRE(s->skip("flooded", "storm").ok());
  CHECK(s->view().plot_label == "102");
  CHECK_FALSE(s->jump_to("999").ok());
  REQUIRE(s->jump_to(" 305 ").ok());
  CHECK(s->view().plot_label == "305");
  REQUIRE(s->enter("240").kind == EntryOutcome::Kind::saved);
  REQUIRE(s->jump_to("305").ok());
  REQUIRE(s->enter("241").kind == EntryOutcome::Kind::saved);   // an edit
  REQUIRE(s->undo().ok());                                       // back to 240
  CHECK(s->view().plot_label == "305");
  CHECK(*s->view().current == "240");
  REQUIRE(s->undo().ok());                                       // 305 withdrawn
  CHECK(s->view().plot_label == "305");
  CHECK(*s->view().current == "missing: withdrawn");
  REQUIRE(s->undo().ok());                                       // the skip of 101 withdrawn
  CHECK(s->view().plot_label == "101");
  CHECK(*s->view().current == "missing: withdrawn");
  CHECK_FALSE(s->undo().ok());
  auto open = open_trial_database(db);
  CHECK(all_observations(open->db)->size() == 6);                // nothing overwritten
  // The session's cached rows agree with a fresh read of the log.
  auto fresh = RecordSession::open(db, "Ana");
  REQUIRE(fresh.ok());
  for (const char* label : {"101", "305"}) {
    REQUIRE(s->jump_to(label).ok());
    REQUIRE(fresh->jump_to(label).ok());
    CHECK(s->view().current == fresh->view().current);
    CHECK(s->view().walk_done == fresh->view().walk_done);
  }
}

TEST_CASE("a value confirmed as right, a note or an undo keep who measured it") {
  const std::string db = test::demo_day_trial("observer_kept.furrow");   // height by Mara
  auto s = RecordSession::open(db, "Crew1");
  REQUIRE(s.ok());
  s->set_trait(1);
  REQUIRE(s->jump_to("307").ok());
  REQUIRE(s->confirm_saved("outlier").ok());
  REQUIRE(s->add_note("checked twice").ok());
  auto open = open_trial_database(db);
  REQUIRE(open.ok());
  auto live = live_observations(open->db, open->trial.trait_ids[1]);
  REQUIRE(live.ok());
  bool found = false;
  for (const auto& x : *live)
    if (x.plot_id == open->trial.plot_ids[s->plot_index()]) {
      found = true;
      CHECK(x.observer == "Mara");
      CHECK(x.note == "checked twice");
      CHECK(has_check(x.confirmed_checks, "outlier"));
    }
  CHECK(found);
}

TEST_CASE("a note kept for a plot without a value is said to be dropped when the crew moves on") {
  const std::string db = test::fresh_demo_trial("note_dropped.furrow");
  auto s = RecordSession::open(db, "Ana");
  REQUIRE(s.ok());
  REQUIRE(s->add_note("stakes bent").ok());
  CHECK(s->view().pending_note == "stakes bent");
  s->next();
  CHECK(s->view().notice.find("the note for plot 101") != std::string::npos);
}

TEST_CASE("blind scoring hides the treatment; walking all traits per plot") {
  const std::string db = test::fresh_demo_trial("blind.furrow");
  auto s = RecordSession::open(db, "Ana");
  REQUIRE(s.ok());
  CHECK(s->view().treatment == "Quillon");
  s->set_blind(true);
  CHECK(s->view().treatment == "hidden");
  WalkChoice every;
  for (const Trait& t : s->trial().plan.traits) every.trait_codes.push_back(t.code);
  every.every_trait_per_plot = true;
  REQUIRE(s->set_walk(every).ok());
  CHECK(s->view().plot_label == "101");
  CHECK(s->view().trait_code == "stand_count");
  s->next();
  CHECK(s->view().plot_label == "101");
  CHECK(s->view().trait_code == "height_cm");
  for (int i = 0; i < 4; ++i) s->next();
  CHECK(s->view().plot_label == "102");
  CHECK(s->view().trait_code == "stand_count");
  CHECK_FALSE(RecordSession::open(db, "").ok());
}

}  // namespace
}  // namespace furrow

namespace furrow {
namespace {

TEST_CASE("a scanned stake code of this trial opens its plot; one of another trial is refused by name") {
  const std::string db = test::fresh_demo_trial("stake_scan.furrow");
  auto s = RecordSession::open(db, "Ana");
  REQUIRE(s.ok());
  const StoredTrial& t = s->trial();
  REQUIRE(s->jump_to(stake_code_text({t.uid, t.plan.name, "307"}) + "\n").ok());
  CHECK(s->view().plot_label == "307");
  const auto other = s->jump_to(stake_code_text({"0123456789abcdef0123456789abcdef", "Wetland sedge restoration", "101"}));
  REQUIRE_FALSE(other.ok());
  CHECK(other.problem().message ==
        "this stake belongs to the trial 'Wetland sedge restoration' (plot 101), not to '" + t.plan.name + "'");
  CHECK(s->view().plot_label == "307");   // refused: nothing moved
  REQUIRE(s->jump_to("212").ok());        // a typed label keeps working
  CHECK(s->view().plot_label == "212");
  // A code of this trial naming a plot it does not have is refused like a typed one.
  CHECK_FALSE(s->jump_to(stake_code_text({t.uid, t.plan.name, "999"})).ok());
}

}  // namespace
}  // namespace furrow
