// The Check screen driven headlessly on the demo day: the outlier and the
// missing cell open their plots; every target is large enough.

#include "app/field/screens/check_screen.h"

#include <doctest/doctest.h>
#include <imgui.h>

#include "app/work/record_session.h"
#include "app/work/trial_analysis.h"
#include "tests/app/field/headless_imgui.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

struct Headless {
  Headless(float w, float h, const StoredTrial& t, const Analysis* a, std::string p)
      : trial(t), analysis(a), problem(std::move(p)), ui(w, h, [this] {
          if (auto x = draw_check_screen(trial, analysis, problem, "plant height (cm)", "cm", every_trait, theme, 1.0f, 0.0f, &state))
            action = x;
        }) {
    ui.frame();
    ui.frame();
  }
  const StoredTrial& trial;
  const Analysis* analysis;
  std::string problem;
  Theme theme = make_theme(ThemeKind::daylight);
  CheckScreenState state;
  std::vector<EveryTraitOutlier> every_trait;
  std::optional<CheckAction> action;
  test::HeadlessImGui ui;
};

size_t index_of(const StoredTrial& t, const std::string& label) {
  for (size_t i = 0; i < t.layout.plots.size(); ++i)
    if (t.layout.plots[i].label == label) return i;
  FAIL("no plot " << label);
  return 0;
}

TEST_CASE("the slip is listed as an outlier and the flooded plot as a missing cell; rows open the plot") {
  const std::string path = test::demo_day_trial("check_screen_test.furrow");
  auto s = RecordSession::open(path, "Mara");
  REQUIRE(s.ok());
  const auto a = analyse_trial_trait(s->trial(), s->live(), 1, 1, AnalysisOptions{});
  REQUIRE(a.ok());
  // What to act on comes first: on a tablet-sized screen without scrolling.
  Headless h(1280, 800, s->trial(), &*a, "");
  const TapTarget* outlier = test::find_target(h.state.targets, "outlier 307");
  const TapTarget* missing = test::find_target(h.state.targets, "missing 214");
  REQUIRE(outlier != nullptr);
  REQUIRE(missing != nullptr);
  for (const TapTarget& t : h.state.targets) {
    CAPTURE(t.label);
    CHECK(t.y1 - t.y0 >= kTouchTargetPx);
    CHECK(t.x1 - t.x0 >= kTouchTargetPx);
  }
  h.ui.tap(*outlier);
  REQUIRE(h.action.has_value());
  CHECK(h.action->kind == CheckAction::Kind::open_plot);
  CHECK(h.action->plot_index == index_of(s->trial(), "307"));
  h.action.reset();
  h.ui.tap(*test::find_target(h.state.targets, "missing 214"));
  REQUIRE(h.action.has_value());
  CHECK(h.action->plot_index == index_of(s->trial(), "214"));
}

TEST_CASE("without an analysis the screen says why and still changes trait") {
  const std::string path = test::demo_day_trial("check_screen_empty.furrow");
  auto s = RecordSession::open(path, "Mara");
  REQUIRE(s.ok());
  const auto a = analyse_trial_trait(s->trial(), s->live(), 2, 1, AnalysisOptions{});
  REQUIRE_FALSE(a.ok());   // heading not collected yet
  Headless h(800, 1280, s->trial(), nullptr, a.problem().message);
  CHECK(test::find_target(h.state.targets, "next trait") != nullptr);
  CHECK(test::find_target(h.state.targets, "outlier 307") == nullptr);
  h.ui.tap(*test::find_target(h.state.targets, "previous trait"));
  REQUIRE(h.action.has_value());
  CHECK(h.action->kind == CheckAction::Kind::previous_trait);
}

}  // namespace
}  // namespace furrow

namespace furrow {
namespace {

TEST_CASE("means are sorted by value by default, in the plan's order on request; the supervisor's every-trait list opens plots") {
  const std::string path = test::demo_day_trial("check_screen_sort.furrow");
  auto s = RecordSession::open(path, "Mara");
  REQUIRE(s.ok());
  const auto a = analyse_trial_trait(s->trial(), s->live(), 1, 1, AnalysisOptions{});
  REQUIRE(a.ok());
  Headless h(1280, 800, s->trial(), &*a, "");
  CHECK(test::find_target(h.state.targets, "Sort as in the plan") != nullptr);
  h.ui.tap(*test::find_target(h.state.targets, "Sort as in the plan"));
  CHECK(h.state.means_in_plan_order);
  CHECK(test::find_target(h.state.targets, "Sort by mean") != nullptr);
  h.every_trait = {{index_of(s->trial(), "307"), 1, 1, "plot 307, plant height: outlier plot"}};
  h.ui.tap(*test::find_target(h.state.targets, "every trait"));
  CHECK(h.state.every_trait_outliers);
  const TapTarget* row = test::find_target(h.state.targets, "plot 307, plant height: outlier plot");
  REQUIRE(row != nullptr);
  h.ui.tap(*row);
  REQUIRE(h.action.has_value());
  CHECK(h.action->kind == CheckAction::Kind::open_plot_trait);
  CHECK(h.action->trait_index == 1);
}

}  // namespace
}  // namespace furrow

namespace furrow {
namespace {

TEST_CASE("a factorial trial offers to leave out the interaction; an RCBD does not") {
  const std::string path = test::demo_day_trial("check_interaction_test.furrow");
  auto s = RecordSession::open(path, "Mara");
  REQUIRE(s.ok());
  const auto a = analyse_trial_trait(s->trial(), s->live(), 1, 1, AnalysisOptions{});
  REQUIRE(a.ok());
  {
    Headless rcbd(1280, 800, s->trial(), &*a, "");
    CHECK(test::find_target(rcbd.state.targets, "interaction") == nullptr);
  }
  StoredTrial factorial = s->trial();
  factorial.plan.design = DesignKind::factorial;
  Headless h(1280, 800, factorial, &*a, "");
  const TapTarget* toggle = test::find_target(h.state.targets, "interaction");
  REQUIRE(toggle != nullptr);
  CHECK(toggle->y1 - toggle->y0 >= kTouchTargetPx);
  CHECK_FALSE(h.state.without_interaction);
  h.ui.tap(*toggle);
  CHECK(h.state.without_interaction);
  h.ui.tap(*test::find_target(h.state.targets, "interaction"));
  CHECK_FALSE(h.state.without_interaction);
}

}  // namespace
}  // namespace furrow
