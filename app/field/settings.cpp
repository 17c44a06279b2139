#include "app/field/settings.h"

#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "storage/text_file.h"

namespace furrow {

Result<Settings> load_settings(const std::string& path) {
  Settings s;
  std::ifstream in(path);
  if (!in) return s;
  std::stringstream text;
  text << in.rdbuf();
  const auto j = nlohmann::json::parse(text.str(), nullptr, false);
  if (j.is_discarded() || !j.is_object()) return make_problem(path + ": the settings file is not valid JSON");
  auto field = [&](const char* name, auto check) -> Status {
    if (!j.contains(name)) return ok_status();
    if (!check(j[name])) return make_problem(path + ": setting '" + name + "' has a wrong value", name);
    return ok_status();
  };
  Status st = field("observer", [&](const nlohmann::json& v) {
    if (!v.is_string()) return false;
    s.observer = v.get<std::string>();
    return true;
  });
  if (!st) return st.problem();
  st = field("ui_scale", [&](const nlohmann::json& v) {
    if (!v.is_number() || v.get<double>() < kMinUiScale || v.get<double>() > kMaxUiScale) return false;
    s.ui_scale = v.get<double>();
    return true;
  });
  if (!st) return st.problem();
  st = field("theme", [&](const nlohmann::json& v) {
    if (v == "daylight") s.theme = ThemeKind::daylight;
    else if (v == "dark") s.theme = ThemeKind::dark;
    else return false;
    return true;
  });
  if (!st) return st.problem();
  st = field("alpha", [&](const nlohmann::json& v) {
    if (!v.is_number() || !(v.get<double>() >= 0.01 && v.get<double>() <= 0.10)) return false;
    s.alpha = v.get<double>();
    return true;
  });
  if (!st) return st.problem();
  st = field("blind_scoring", [&](const nlohmann::json& v) {
    if (!v.is_boolean()) return false;
    s.blind_scoring = v.get<bool>();
    return true;
  });
  if (!st) return st.problem();
  return s;
}

Status save_settings(const std::string& path, const Settings& s) {
  nlohmann::json j = {{"observer", s.observer},
                      {"ui_scale", s.ui_scale},
                      {"theme", s.theme == ThemeKind::daylight ? "daylight" : "dark"},
                      {"alpha", s.alpha},
                      {"blind_scoring", s.blind_scoring}};
  return write_text_file(path, j.dump(2) + "\n");
}

}  // namespace furrow
