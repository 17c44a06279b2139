#include "app/field/settings.h"

#include <doctest/doctest.h>

#include "tests/test_support.h"

#include <filesystem>
#include <fstream>

#include "platform/data_folder.h"

namespace furrow {
namespace {

std::string temp_file(const std::string& name) {
  const auto dir = test::scratch_dir("settings_test");
  std::filesystem::create_directories(dir);
  std::filesystem::remove(dir / name);
  return (dir / name).string();
}

TEST_CASE("settings persist: what is saved is read back") {
  const std::string path = temp_file("settings.json");
  auto none = load_settings(path);
  REQUIRE(none.ok());
  CHECK(none->theme == ThemeKind::daylight);
  CHECK(none->alpha == 0.05);
  Settings s;
  s.observer = "Mara Quist";
  s.ui_scale = 1.5;
  s.theme = ThemeKind::dark;
  s.alpha = 0.01;
  s.blind_scoring = true;
  REQUIRE(save_settings(path, s).ok());
  const auto back = load_settings(path);
  REQUIRE(back.ok());
  CHECK(back->observer == "Mara Quist");
  CHECK(back->ui_scale == 1.5);
  CHECK(back->theme == ThemeKind::dark);
  CHECK(back->alpha == 0.01);
  CHECK(back->blind_scoring);
}

TEST_CASE("a damaged settings file is reported with the field, and not changed") {
  const std::string path = temp_file("bad.json");
  {
    std::ofstream f(path);
    f << R"({"observer": "Ana", "ui_scale": 12})";
  }
  const auto r = load_settings(path);
  REQUIRE_FALSE(r.ok());
  CHECK(r.problem().column == "ui_scale");
  {
    std::ofstream f(path);
    f << "{not json";
  }
  CHECK_FALSE(load_settings(path).ok());
}

TEST_CASE("the data folder follows FURROW_DATA_DIR and is created") {
  const auto dir = test::scratch_dir("data_folder_test") / "nested";
  std::filesystem::remove_all(dir.parent_path());
  setenv("FURROW_DATA_DIR", dir.c_str(), 1);
  const auto d = data_folder();
  unsetenv("FURROW_DATA_DIR");
  REQUIRE(d.ok());
  CHECK(*d == dir.string());
  CHECK(std::filesystem::is_directory(dir));
}

}  // namespace
}  // namespace furrow
