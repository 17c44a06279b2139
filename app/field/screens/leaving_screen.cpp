#include "app/field/screens/leaving_screen.h"

#include <imgui.h>

#include <cstdio>

#include "app/field/screens/widgets.h"

namespace furrow {

std::optional<OpenItem> draw_leaving_screen(const BeforeLeaving& list, const Theme& t, float scale, float top_px,
                                            LeavingScreenState* st) {
  st->targets.clear();
  std::optional<OpenItem> open;
  const ScreenWindow window("Before leaving", t, top_px);
  ImGui::TextWrapped("Before leaving the field: %d conflicts, %d outlier plots, %d values to check, %d values not "
                     "recorded. Tap a line to open that plot.",
                     list.conflicts, list.outliers, list.flagged, list.missing);
  const float row = kTouchTargetPx * scale * 1.3f;
  ImGui::BeginChild("items", ImVec2(0, 0), false, ImGuiWindowFlags_NoScrollbar);
  drag_to_scroll(scale);
  const float width = ImGui::GetContentRegionAvail().x;
  for (size_t i = 0; i < list.items.size(); ++i) {
    const LeavingItem& item = list.items[i];
    const Rgb bg = item.kind == LeavingItem::Kind::conflict  ? t.refuse
                   : item.kind == LeavingItem::Kind::missing ? t.panel
                                                             : t.confirm;
    const Rgb fg = item.kind == LeavingItem::Kind::conflict  ? t.refuse_text
                   : item.kind == LeavingItem::Kind::missing ? t.text
                                                             : t.confirm_text;
    const char* kind = item.kind == LeavingItem::Kind::conflict  ? "CONFLICT"
                       : item.kind == LeavingItem::Kind::outlier ? "OUTLIER"
                       : item.kind == LeavingItem::Kind::flagged ? "CHECK"
                                                                 : "MISSING";
    char label[400];
    std::snprintf(label, sizeof label, "%-9s %s##item%zu", kind, item.message.c_str(), i);
    ButtonLook look{bg, fg};
    look.align_left = true;
    if (solid_button(label, ImVec2(width, row), look, &st->targets, kind + std::string(" ") + item.message))
      open = OpenItem{item.plot_index, item.trait_index, item.occasion};
  }
  ImGui::EndChild();
  return open;
}

}  // namespace furrow
