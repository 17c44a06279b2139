#include "app/screens/leaving_screen.h"

#include <imgui.h>
#include <imgui_internal.h>

#include <cstdio>

namespace furrow {
namespace {

ImVec4 colour(const Rgb& c) { return ImVec4(c.r, c.g, c.b, 1.0f); }

// A finger that moves this far while down is scrolling, not tapping.
constexpr float kDragScrollPx = 12.0f;

}  // namespace

std::optional<OpenItem> draw_leaving_screen(const BeforeLeaving& list, const StoredTrial& trial, const Theme& t,
                                            float scale, float top_px, LeavingScreenState* st) {
  (void)trial;
  st->targets.clear();
  std::optional<OpenItem> open;
  const ImGuiViewport* vp = ImGui::GetMainViewport();
  ImGui::SetNextWindowPos(ImVec2(vp->WorkPos.x, vp->WorkPos.y + top_px));
  ImGui::SetNextWindowSize(ImVec2(vp->WorkSize.x, vp->WorkSize.y - top_px));
  ImGui::PushStyleColor(ImGuiCol_WindowBg, colour(t.background));
  ImGui::PushStyleColor(ImGuiCol_Text, colour(t.text));
  ImGui::Begin("Before leaving", nullptr, ImGuiWindowFlags_NoDecoration | ImGuiWindowFlags_NoMove |
                                              ImGuiWindowFlags_NoSavedSettings);
  ImGui::TextWrapped("Before leaving the field: %d conflicts, %d outlier plots, %d values to check, %d values not "
                     "recorded. Tap a line to open that plot.",
                     list.conflicts, list.outliers, list.flagged, list.missing);
  const float row = kTouchTargetPx * scale * 1.3f;
  ImGui::BeginChild("items", ImVec2(0, 0), false, ImGuiWindowFlags_NoScrollbar);
  if (ImGui::IsWindowHovered(ImGuiHoveredFlags_AllowWhenBlockedByActiveItem) &&
      ImGui::IsMouseDragging(ImGuiMouseButton_Left, kDragScrollPx * scale)) {
    ImGui::SetScrollY(ImGui::GetScrollY() - ImGui::GetIO().MouseDelta.y);
    ImGui::ClearActiveID();   // a drag is not a tap
  }
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
    ImGui::PushStyleColor(ImGuiCol_Button, colour(bg));
    ImGui::PushStyleColor(ImGuiCol_ButtonHovered, colour(bg));
    ImGui::PushStyleColor(ImGuiCol_ButtonActive, colour(bg));
    ImGui::PushStyleColor(ImGuiCol_Text, colour(fg));
    ImGui::PushStyleVar(ImGuiStyleVar_ButtonTextAlign, ImVec2(0.0f, 0.5f));
    if (ImGui::Button(label, ImVec2(width, row))) open = OpenItem{item.plot_index, item.trait_index, item.occasion};
    ImGui::PopStyleVar();
    ImGui::PopStyleColor(4);
    const ImVec2 a = ImGui::GetItemRectMin(), b = ImGui::GetItemRectMax();
    st->targets.push_back({kind + std::string(" ") + item.message, a.x, a.y, b.x, b.y});
  }
  ImGui::EndChild();
  ImGui::End();
  ImGui::PopStyleColor(2);
  return open;
}

}  // namespace furrow
