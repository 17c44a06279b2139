#include "app/field/screens/settings_screen.h"

#include <imgui.h>

#include <algorithm>

#include "app/field/screens/widgets.h"

#include <cmath>
#include <cstdio>
#include <cstring>

namespace furrow {
namespace {

// A button that shows whether its choice is the current one.
bool choice(const char* label, bool selected, float width, float height, const Theme& t, SettingsScreenState* st) {
  ButtonLook look{selected ? t.accent : t.panel, selected ? t.accent_text : t.text};
  look.border_px = 2.0f;
  look.border = t.text;
  return solid_button(label, ImVec2(width, height), look, &st->targets);
}

// UI scale steps offered (a quarter step is visible, finer is not).
constexpr double kScaleStep = 0.25;

}  // namespace

std::optional<Settings> draw_settings_screen(const Settings& cur, const Theme& t, float scale, float top_px,
                                             SettingsScreenState* st) {
  st->targets.clear();
  std::optional<Settings> changed;
  Settings next = cur;
  if (!st->observer_loaded) {
    std::snprintf(st->observer, sizeof st->observer, "%s", cur.observer.c_str());
    st->observer_loaded = true;
  }
  const ScreenWindow window("Settings", t, top_px, {{ImGuiCol_FrameBg, t.panel}});
  drag_to_scroll(scale);
  const float avail = ImGui::GetContentRegionAvail().x;
  const float h = touch_px(scale) * 1.3f;
  // Buttons wrap to the next line rather than run off a narrow window.
  const float w = std::min(4.5f * touch_px(scale), avail);

  ImGui::TextWrapped("Observer (recorded with every value)");
  ImGui::SetNextItemWidth(std::min(2 * w, avail));
  ImGui::PushStyleVar(ImGuiStyleVar_FrameBorderSize, 2.0f * scale);
  ImGui::PushStyleVar(ImGuiStyleVar_FramePadding, ImVec2(10 * scale, (h - ImGui::GetFontSize()) / 2));
  ImGui::PushStyleColor(ImGuiCol_Border, to_imgui(t.text));
  if (ImGui::InputText("##observer", st->observer, sizeof st->observer)) {
    next.observer = st->observer;
    changed = next;
  }
  note_target("observer", &st->targets);
  ImGui::PopStyleColor();
  ImGui::PopStyleVar(2);

  ImGui::TextWrapped("Theme");
  if (choice("Daylight", cur.theme == ThemeKind::daylight, w, h, t, st)) {
    next.theme = ThemeKind::daylight;
    changed = next;
  }
  flow_next(w);
  if (choice("Dark", cur.theme == ThemeKind::dark, w, h, t, st)) {
    next.theme = ThemeKind::dark;
    changed = next;
  }

  ImGui::TextWrapped("Size of text and buttons: %.0f %%", cur.ui_scale * 100);
  if (choice("Smaller", false, w, h, t, st) && cur.ui_scale - kScaleStep >= kMinUiScale - 1e-9) {
    next.ui_scale = cur.ui_scale - kScaleStep;
    changed = next;
  }
  flow_next(w);
  if (choice("Larger", false, w, h, t, st) && cur.ui_scale + kScaleStep <= kMaxUiScale + 1e-9) {
    next.ui_scale = cur.ui_scale + kScaleStep;
    changed = next;
  }

  ImGui::TextWrapped("Significance level for LSD, HSD and letters");
  for (double alpha : {0.10, 0.05, 0.01}) {
    char label[16];
    std::snprintf(label, sizeof label, "%.2f", alpha);
    const float aw = std::max(touch_px(scale), std::min(w * 0.6f, avail));
    if (alpha != 0.10) flow_next(aw);
    if (choice(label, std::abs(cur.alpha - alpha) < 1e-12, aw, h, t, st)) {
      next.alpha = alpha;
      changed = next;
    }
  }

  ImGui::TextWrapped("Blind scoring (treatment names hidden while collecting)");
  if (choice(cur.blind_scoring ? "Blind scoring is on" : "Blind scoring is off", cur.blind_scoring, w, h, t, st)) {
    next.blind_scoring = !cur.blind_scoring;
    changed = next;
  }
  return changed;
}

}  // namespace furrow
