// The Trials screen in the real field app, driven headlessly: a second
// trial from the same plan is created only after the crew says so; a
// removed trial goes to the trash folder, never deleted; a trial opened from
// elsewhere stays listed; a station's trial file typed in asks whether to copy
// it or open it.

#include <doctest/doctest.h>
#include <imgui.h>

#include <cstring>
#include <filesystem>

#include "app/field/field_app_state.h"
#include "app/field/screens/trials_screen.h"
#include "tests/app/field/headless_imgui.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

namespace fs = std::filesystem;

struct App {
  explicit App(const std::string& folder, const std::string& db = {}) : options{db, "", "Ana"} {
    Settings settings;
    settings.observer = "Ana";
    app = FieldAppState::create(options, settings, "", folder);
    if (!db.empty()) REQUIRE(app->open_trial(db).ok());
    app->set_screen(Screen::trials);
    ui = std::make_unique<test::HeadlessImGui>(1280.0f, 800.0f, [this] { (void)app->draw(1.0f); });
    ui->frame();
    ui->frame();
  }
  bool has(const std::string& label) const { return test::find_target(app->targets(), label) != nullptr; }
  void tap(const std::string& label) {
    const TapTarget* t = test::find_target(app->targets(), label);
    REQUIRE_MESSAGE(t != nullptr, "no '" << label << "' on the Trials screen");
    const TapTarget copy = *t;
    ui->tap(copy);
    ui->frame();
  }
  FieldAppOptions options;
  std::unique_ptr<FieldAppState> app;
  std::unique_ptr<test::HeadlessImGui> ui;
};

size_t furrow_files(const fs::path& dir) {
  size_t n = 0;
  for (const auto& e : fs::directory_iterator(dir)) n += e.path().extension() == ".furrow";
  return n;
}

TEST_CASE("Create from the same plan twice asks first; Cancel creates nothing, Create another does") {
  const fs::path folder = test::scratch_dir("trials_twice");
  fs::remove_all(folder);
  fs::create_directories(folder);
  fs::copy_file(std::string(FURROW_SOURCE_DIR) + "/demo_data/harrow_ridge_oats_2026.plan.csv",
                folder / "harrow_ridge_oats_2026.plan.csv");
  App a(folder.string());
  a.tap("plan harrow_ridge_oats_2026.plan.csv");
  CHECK(furrow_files(folder) == 1);
  a.app->set_screen(Screen::trials);
  a.ui->frame();
  a.tap("plan harrow_ridge_oats_2026.plan.csv");
  CHECK(furrow_files(folder) == 1);          // asked, not created
  CHECK(a.has("Create another"));
  a.tap("Cancel");
  CHECK(furrow_files(folder) == 1);
  a.tap("plan harrow_ridge_oats_2026.plan.csv");
  a.tap("Create another");
  CHECK(furrow_files(folder) == 2);
}

TEST_CASE("Remove moves the trial to the trash folder after asking; a trial from elsewhere stays listed until removed") {
  const fs::path folder = test::scratch_dir("trials_remove");
  fs::remove_all(folder);
  fs::create_directories(folder);
  const std::string inside = (folder / "demo.furrow").string();
  fs::copy_file(test::demo_day_trial("remove_source.furrow"), inside);
  const std::string elsewhere = test::demo_day_trial("elsewhere.furrow");
  {
    App a(folder.string(), elsewhere);   // opened with --db from outside the folder
    CHECK(a.has("trial elsewhere.furrow"));
    CHECK(a.has("trial demo.furrow"));
  }
  App b(folder.string());                // a later start: still listed
  CHECK(b.has("trial elsewhere.furrow"));
  b.tap("remove demo.furrow");
  CHECK(fs::exists(inside));                 // asked first
  b.tap("Move to trash");
  CHECK_FALSE(fs::exists(inside));
  REQUIRE(fs::exists(folder / "trash"));
  CHECK(furrow_files(folder / "trash") == 1);   // moved, not deleted
  b.tap("remove elsewhere.furrow");
  b.tap("Remove from the list");
  CHECK(fs::exists(elsewhere));              // the file stays where it is
  CHECK_FALSE(b.has("trial elsewhere.furrow"));
}

TEST_CASE("a station's trial file typed in asks: this device's copy, or the station's file itself") {
  const fs::path folder = test::scratch_dir("trials_typed");
  fs::remove_all(folder);
  fs::create_directories(folder);
  const std::string station = test::fresh_demo_trial("typed_station.furrow");
  App a(folder.string());
  const TapTarget* field = test::find_target(a.app->targets(), "plan path");
  REQUIRE(field != nullptr);
  a.ui->tap(*field);
  ImGui::GetIO().AddInputCharactersUTF8(station.c_str());
  a.ui->frame();
  a.tap("Create");
  CHECK(a.has("Make this device's copy"));
  CHECK(furrow_files(folder) == 0);
  a.tap("Open the station's file");
  CHECK(a.app->screen() == Screen::record);
  CHECK(a.app->session() != nullptr);
  CHECK(furrow_files(folder) == 0);           // opened, not copied
}

}  // namespace
}  // namespace furrow
