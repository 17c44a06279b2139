#include "app/field/screens/leaving_screen.h"

#include <imgui.h>

#include <string>

#include "app/field/screens/widgets.h"
#include "app/work/glossary.h"

namespace furrow {

std::optional<OpenItem> draw_leaving_screen(const BeforeLeaving& list, const std::string& walk, const Theme& t,
                                            float scale, float top_px, LeavingScreenState* st) {
  st->targets.clear();
  std::optional<OpenItem> open;
  const ScreenWindow window("Before leaving", t, top_px);
  drag_to_scroll(scale);
  ImGui::TextWrapped("%s: %s", term::kTodaysWalk, walk.c_str());
  if (list.items.empty()) {
    ImGui::TextWrapped("Nothing to fix in today's walk.");
  } else {
    const std::string counts = count_of(list.conflicts, term::kConflict) + ", " +
                               count_of(list.outliers, term::kOutlierPlot) + ", " +
                               count_of(list.flagged, term::kValueToCheck) + ", " + std::to_string(list.missing) +
                               " " + term::kNotRecorded + ". Tap a line to open that plot.";
    ImGui::TextWrapped("%s", counts.c_str());
  }
  if (!list.outside_walk.empty()) ImGui::TextWrapped("%s", list.outside_walk.c_str());
  const float row = touch_px(scale) * 1.3f;
  const float width = ImGui::GetContentRegionAvail().x;
  for (size_t i = 0; i < list.items.size(); ++i) {
    const LeavingItem& item = list.items[i];
    const auto first = item.kinds.front();
    const Rgb bg = first == LeavingItem::Kind::conflict ? t.refuse : first == LeavingItem::Kind::missing ? t.panel : t.confirm;
    const Rgb fg = first == LeavingItem::Kind::conflict  ? t.refuse_text
                   : first == LeavingItem::Kind::missing ? t.text
                                                         : t.confirm_text;
    ButtonLook look{bg, fg};
    look.align_left = true;
    look.border_px = first == LeavingItem::Kind::missing ? 2.0f * scale : 0.0f;
    look.border = t.text;
    const std::string id = "##item" + std::to_string(i);
    if (wrapped_button(id.c_str(), item.message, width, row, look, &st->targets))
      open = OpenItem{item.plot_index, item.trait_index, item.occasion};
  }
  return open;
}

}  // namespace furrow
