// The Station screen driven headlessly: keep one of two values, type another
// value, start an import; every target at least 48 px.

#include "app/field/screens/station_screen.h"

#include <doctest/doctest.h>
#include <imgui.h>

#include "tests/app/field/headless_imgui.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

struct Headless {
  Headless(float w, float h) : ui(w, h, [this] {
    if (auto a = draw_station_screen(view, theme, 1.0f, 0.0f, &state)) action = a;
  }) {
    auto open = open_trial_database(test::fresh_demo_trial("station_screen.furrow"));
    REQUIRE(open.ok());
    trial = open->trial;
    view.trial = &trial;
    view.bundle_folder = "/data/furrow/bundles";
    view.export_folder = "/data/furrow/exports";
    ConflictCell c;
    c.plot_index = 0;
    c.trait_index = 1;
    LiveObservation a, b;
    a.key = {"aaaa", 1};
    a.value = "96";
    a.observer = "Ana";
    b.key = {"bbbb", 1};
    b.value = "69";
    b.observer = "Ben";
    c.rows = {a, b};
    view.conflicts = {c};
    ui.frame();
  }
  StoredTrial trial;
  StationView view;
  Theme theme = make_theme(ThemeKind::daylight);
  StationScreenState state;
  std::optional<StationAction> action;
  test::HeadlessImGui ui;
};

TEST_CASE("keep one of the disagreeing values") {
  Headless h(1280, 800);
  const std::string plot = "plot " + h.trial.layout.plots[0].label;
  h.ui.tap(*test::find_target(h.state.targets, "keep " + plot + " 1"));
  REQUIRE(h.action.has_value());
  CHECK(h.action->kind == StationAction::Kind::keep);
  CHECK(h.action->conflict == 0);
  CHECK(h.action->row == 1);
}

TEST_CASE("type another value, or a reason for a missing value") {
  Headless h(800, 1280);
  const std::string plot = "plot " + h.trial.layout.plots[0].label;
  h.ui.tap(*test::find_target(h.state.targets, "other " + plot));
  REQUIRE(test::find_target(h.state.targets, "typed " + plot) != nullptr);
  h.ui.tap(*test::find_target(h.state.targets, "typed " + plot));
  for (const char* c = "97"; *c; ++c) ImGui::GetIO().AddInputCharacter(*c);
  h.ui.frame();
  h.ui.tap(*test::find_target(h.state.targets, "save value " + plot));
  REQUIRE(h.action.has_value());
  CHECK(h.action->kind == StationAction::Kind::new_value);
  CHECK(h.action->text == "97");
}

TEST_CASE("import starts from one tap; every target is at least 48 px in both shapes") {
  for (const auto& [w, hgt] : {std::pair{1280.0f, 800.0f}, std::pair{800.0f, 1280.0f}}) {
    Headless h(w, hgt);
    for (const TapTarget& t : h.state.targets) {
      CAPTURE(t.label);
      CHECK(t.x1 - t.x0 >= kTouchTargetPx);
      CHECK(t.y1 - t.y0 >= kTouchTargetPx - 0.5f);
    }
    h.ui.tap(*test::find_target(h.state.targets, "Import bundles"));
    REQUIRE(h.action.has_value());
    CHECK(h.action->kind == StationAction::Kind::import_bundles);
  }
}

}  // namespace
}  // namespace furrow
