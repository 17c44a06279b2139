// The Trials screen driven headlessly: open a trial, create one from a plan
// file found in the folder or typed, open the demo; targets large enough.

#include "app/field/screens/trials_screen.h"

#include <doctest/doctest.h>
#include <imgui.h>

#include "tests/app/field/headless_imgui.h"

namespace furrow {
namespace {

TrialsView sample_view() {
  TrialsView v;
  v.folder = "/data/furrow";
  TrialSummary a;
  a.path = "/data/furrow/oats.furrow";
  a.file_name = "oats.furrow";
  a.name = "Oats";
  a.design = "randomised complete block";
  a.plots = 80;
  a.traits = 5;
  a.progress.cells_done = 160;
  a.progress.cells_required = 400;
  a.progress.last_change = "2026-05-02T10:11:12.000Z";
  TrialSummary broken;
  broken.path = "/data/furrow/broken.furrow";
  broken.file_name = "broken.furrow";
  broken.problem = "file is not a database";
  v.trials = {a, broken};
  v.plan_files = {"/data/furrow/barley.plan.csv"};
  v.demo_available = true;
  return v;
}

struct Headless {
  Headless(float w, float h) : ui(w, h, [this] {
    if (auto a = draw_trials_screen(view, theme, 1.0f, 0.0f, &state)) action = a;
  }) {
    ui.frame();
  }
  TrialsView view = sample_view();
  Theme theme = make_theme(ThemeKind::daylight);
  TrialsScreenState state;
  std::optional<TrialsAction> action;
  test::HeadlessImGui ui;
};

TEST_CASE("a tap on a trial opens it; an unreadable one does nothing") {
  Headless h(1280, 800);
  h.ui.tap(*test::find_target(h.state.targets, "trial broken.furrow"));
  CHECK_FALSE(h.action.has_value());
  h.ui.tap(*test::find_target(h.state.targets, "trial oats.furrow"));
  REQUIRE(h.action.has_value());
  CHECK(h.action->kind == TrialsAction::Kind::open);
  CHECK(h.action->path == "/data/furrow/oats.furrow");
}

TEST_CASE("create from a listed plan file, from a typed path, or open the demo") {
  Headless h(800, 1280);
  h.ui.tap(*test::find_target(h.state.targets, "plan barley.plan.csv"));
  REQUIRE(h.action.has_value());
  CHECK(h.action->kind == TrialsAction::Kind::create_from_plan);
  CHECK(h.action->path == "/data/furrow/barley.plan.csv");
  h.action.reset();
  h.ui.tap(*test::find_target(h.state.targets, "plan path"));
  for (const char* c = "/media/usb/wheat.plan.csv"; *c; ++c) ImGui::GetIO().AddInputCharacter(*c);
  h.ui.frame();
  h.ui.tap(*test::find_target(h.state.targets, "Create"));
  REQUIRE(h.action.has_value());
  CHECK(h.action->path == "/media/usb/wheat.plan.csv");
  h.action.reset();
  h.ui.tap(*test::find_target(h.state.targets, "Open the demo trial"));
  REQUIRE(h.action.has_value());
  CHECK(h.action->kind == TrialsAction::Kind::open_demo);
}

TEST_CASE("every target on the Trials screen is at least 48 px in both window shapes") {
  for (const auto& [w, hgt] : {std::pair{1280.0f, 800.0f}, std::pair{800.0f, 1280.0f}}) {
    Headless h(w, hgt);
    REQUIRE(h.state.targets.size() == 8);   // 2 trials and their Remove buttons, demo, plan, path, Create
    for (const TapTarget& t : h.state.targets) {
      CAPTURE(t.label);
      CHECK(t.x1 - t.x0 >= kTouchTargetPx);
      CHECK(t.y1 - t.y0 >= kTouchTargetPx - 0.5f);
    }
  }
}

}  // namespace
}  // namespace furrow
