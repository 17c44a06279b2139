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

namespace furrow {
namespace {

TEST_CASE("a value being typed stays with its cell when another program changes the list of conflicts") {
  Headless h(1280, 800);
  const std::string first = "plot " + h.trial.layout.plots[0].label;
  h.ui.tap(*test::find_target(h.state.targets, "other " + first));
  REQUIRE(test::find_target(h.state.targets, "typed " + first) != nullptr);
  // A merge from the command line puts a new conflict (plot 3) ahead of it.
  ConflictCell earlier = h.view.conflicts.front();
  earlier.plot_index = 2;
  h.view.conflicts.insert(h.view.conflicts.begin(), earlier);
  h.ui.frame();
  CHECK(test::find_target(h.state.targets, "typed " + first) != nullptr);
  CHECK(test::find_target(h.state.targets, "typed plot " + h.trial.layout.plots[2].label) == nullptr);
  // And a Keep carries the cell and the row itself, not only places in the list.
  h.ui.tap(*test::find_target(h.state.targets, "keep " + first + " 0"));
  REQUIRE(h.action.has_value());
  CHECK(h.action->cell.plot_index == 0);
  CHECK(h.action->keep.device_id == "aaaa");
}

}  // namespace
}  // namespace furrow

namespace furrow {
namespace {

TEST_CASE("a device is revoked in two taps: Revoke, then the named confirmation; Keep it takes the question back") {
  Headless h(800, 1280);
  DeviceRecord station, tablet;
  station.enrolment.device_id = h.trial.device_id;
  station.enrolment.role = "station";
  station.enrolment.public_key = std::string(32, 's');
  station.enrolment.label = "Station";
  tablet.enrolment.device_id = "0123456789abcdef";
  tablet.enrolment.public_key = std::string(32, 't');
  tablet.enrolment.label = "Tablet 3";
  tablet.enrolment.enrolled_by = "Mara Quill";
  tablet.enrolment.enrolled_at = "2026-05-01T07:00:00.000Z";
  tablet.rows_in_log = 412;
  h.view.devices = {station, tablet};
  h.ui.frame();
  REQUIRE(test::find_target(h.state.targets, "revoke 0123456789abcdef") != nullptr);
  CHECK(test::find_target(h.state.targets, "revoke " + h.trial.device_id) == nullptr);   // never the station itself
  h.ui.tap(*test::find_target(h.state.targets, "revoke 0123456789abcdef"));
  CHECK_FALSE(h.action.has_value());   // one tap only asks
  REQUIRE(test::find_target(h.state.targets, "keep device 0123456789abcdef") != nullptr);
  h.ui.tap(*test::find_target(h.state.targets, "keep device 0123456789abcdef"));
  CHECK_FALSE(h.action.has_value());
  CHECK(test::find_target(h.state.targets, "confirm revoke 0123456789abcdef") == nullptr);
  h.ui.tap(*test::find_target(h.state.targets, "revoke 0123456789abcdef"));
  h.ui.tap(*test::find_target(h.state.targets, "confirm revoke 0123456789abcdef"));
  REQUIRE(h.action.has_value());
  CHECK(h.action->kind == StationAction::Kind::revoke_device);
  CHECK(h.action->text == "0123456789abcdef");
  for (const TapTarget& t : h.state.targets) {
    CAPTURE(t.label);
    CHECK(t.y1 - t.y0 >= kTouchTargetPx - 0.5f);
  }
}

}  // namespace
}  // namespace furrow

namespace furrow {
namespace {

TEST_CASE("stake labels and the field sheet are one tap away on the Station screen when a trial is open") {
  for (const auto& [label, kind] : {std::pair{"Stake labels (PDF)", StationAction::Kind::write_labels},
                                    std::pair{"Field sheet (PDF)", StationAction::Kind::write_sheet}}) {
    CAPTURE(label);
    Headless h(1280, 800);
    const TapTarget* button = test::find_target(h.state.targets, label);
    REQUIRE(button != nullptr);
    CHECK(button->y1 - button->y0 >= kTouchTargetPx - 0.5f);
    h.ui.tap(*button);
    REQUIRE(h.action.has_value());
    CHECK(h.action->kind == kind);
  }
}

}  // namespace
}  // namespace furrow
