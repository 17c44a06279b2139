#include "app/field/screens/map_screen.h"

#include <imgui.h>

#include <algorithm>
#include <cstdio>

#include "app/field/screens/widgets.h"

namespace furrow {
namespace {

// Cell size after a tap on plots too small to open, at scale 1: a little
// over the touch-target size, so that neighbours are easy to tell apart.
constexpr float kZoomedCellPx = 72.0f;
// The largest cell the whole-field view uses (small trials stay compact).
constexpr float kMaxFitCellPx = 140.0f;

ImU32 colour(const Rgb& c) { return ImGui::ColorConvertFloat4ToU32(to_imgui(c)); }

// The pattern over a plot's fill (or a legend swatch).
void draw_pattern(ImDrawList* dl, ImVec2 a, ImVec2 b, MapPattern pattern, const Rgb& ink, float scale) {
  const float w = b.x - a.x, h = b.y - a.y;
  const float thick = std::max(1.5f, std::min(w, h) * 0.06f) * std::max(1.0f, scale * 0.8f);
  const ImU32 c = colour(ink);
  switch (pattern) {
    case MapPattern::none: break;
    case MapPattern::outline_only: dl->AddRect(a, b, c, 0, 0, std::max(1.5f, thick * 0.6f)); break;
    case MapPattern::diagonal:
      dl->AddLine(ImVec2(a.x + w * 0.15f, b.y - h * 0.15f), ImVec2(b.x - w * 0.15f, a.y + h * 0.15f), c, thick);
      break;
    case MapPattern::cross:
      dl->AddLine(ImVec2(a.x + w * 0.2f, a.y + h * 0.2f), ImVec2(b.x - w * 0.2f, b.y - h * 0.2f), c, thick);
      dl->AddLine(ImVec2(a.x + w * 0.2f, b.y - h * 0.2f), ImVec2(b.x - w * 0.2f, a.y + h * 0.2f), c, thick);
      break;
    case MapPattern::exclamation: {
      const float cx = a.x + w * 0.82f, top = a.y + h * 0.12f, r = std::max(1.5f, thick * 0.7f);
      dl->AddLine(ImVec2(cx, top), ImVec2(cx, a.y + h * 0.34f), c, thick);
      dl->AddCircleFilled(ImVec2(cx, a.y + h * 0.44f), r, c);
      break;
    }
  }
}

}  // namespace

std::optional<MapAction> draw_map_screen(const FieldMap& map, const std::vector<std::string>& labels,
                                         const std::string& trait_title, const Theme& t, float scale, float top_px,
                                         MapScreenState* st) {
  st->targets.clear();
  std::optional<MapAction> action;
  const ScreenWindow window("Field map", t, top_px, {{ImGuiCol_ChildBg, t.panel}}, ImGuiWindowFlags_NoScrollWithMouse);
  const float h = touch_px(scale);
  const ButtonLook plain{t.button, t.button_text};
  const ButtonLook chosen{t.accent, t.accent_text};
  drag_to_scroll(scale);   // the controls and legend scroll; a drag on the map pans it

  // Controls: what colours the plots, which trait, how near.
  const struct { const char* label; MapColouring c; } modes[] = {
      {"Status", MapColouring::status}, {"Value", MapColouring::value}, {"Residual", MapColouring::residual},
      {"Field trend", MapColouring::trend}};
  bool first = true;
  for (const auto& m : modes) {
    const float w = button_width(m.label, scale);
    if (!first) flow_next(w);
    first = false;
    // The chosen colouring is filled; the others are outlined on the page, so
    // that the choice shows by more than a shade of blue.
    ButtonLook outlined{t.background, t.text};
    outlined.border_px = 2.0f * scale;
    outlined.border = t.text;
    if (solid_button(m.label, ImVec2(w, h), st->colouring == m.c ? chosen : outlined, &st->targets) &&
        st->colouring != m.c) {
      st->colouring = m.c;
      action = MapAction{MapAction::Kind::colouring_changed, 0};
    }
  }
  flow_next(button_width("<", scale));
  if (solid_button("<##trait", ImVec2(button_width("<", scale), h), plain, &st->targets, "previous trait"))
    action = MapAction{MapAction::Kind::previous_trait, 0};
  const float title_w = ImGui::CalcTextSize(trait_title.c_str()).x + 16 * scale;
  flow_next(title_w + button_width(">", scale));
  ImGui::AlignTextToFramePadding();
  ImGui::SetCursorPosY(ImGui::GetCursorPosY() + (h - ImGui::GetFrameHeight()) / 2);
  ImGui::TextUnformatted(trait_title.c_str());
  ImGui::SameLine();
  ImGui::SetCursorPosY(ImGui::GetCursorPosY() - (h - ImGui::GetFrameHeight()) / 2);
  if (solid_button(">##trait", ImVec2(button_width(">", scale), h), plain, &st->targets, "next trait"))
    action = MapAction{MapAction::Kind::next_trait, 0};
  const char* zoom_labels[] = {"Zoom out", "Zoom in", "Whole field"};
  float zoom_w = 0;
  for (const char* z : zoom_labels) zoom_w += button_width(z, scale) + ImGui::GetStyle().ItemSpacing.x;
  flow_next(zoom_w);
  bool zoom_out = solid_button("Zoom out", ImVec2(button_width("Zoom out", scale), h), plain, &st->targets);
  ImGui::SameLine();
  bool zoom_in = solid_button("Zoom in", ImVec2(button_width("Zoom in", scale), h), plain, &st->targets);
  ImGui::SameLine();
  ButtonLook zoom_outlined{t.background, t.text};
  zoom_outlined.border_px = 2.0f * scale;
  zoom_outlined.border = t.text;
  if (solid_button("Whole field", ImVec2(button_width("Whole field", scale), h), st->cell_px == 0 ? chosen : zoom_outlined,
                   &st->targets))
    st->cell_px = 0;

  // The legend goes at the bottom: measure its rows first (it wraps like the buttons).
  const float swatch = 36.0f * scale;
  const float spacing = ImGui::GetStyle().ItemSpacing.x;
  const auto legend_width = [&](const LegendEntry& e) {
    return swatch + 8 * scale + ImGui::CalcTextSize(e.label.c_str()).x + 16 * scale;
  };
  int legend_rows = map.legend.empty() ? 0 : 1;
  for (float x = 0; const LegendEntry& e : map.legend) {
    const float w = legend_width(e);
    if (x > 0 && x + w > ImGui::GetContentRegionAvail().x) {
      ++legend_rows;
      x = 0;
    }
    x += w + spacing;
  }
  const float line = ImGui::GetTextLineHeightWithSpacing();
  const float legend_h = legend_rows * (swatch + ImGui::GetStyle().ItemSpacing.y) + (map.scale_low.empty() ? 0 : line) +
                         (map.note.empty() ? 0 : line) + ImGui::GetStyle().ItemSpacing.y;
  const float map_h = std::max(4 * h, ImGui::GetContentRegionAvail().y - legend_h);

  // The map: fit the whole field, or a chosen cell size with panning.
  const int sites = static_cast<int>(map.site_names.size());
  const float header = sites > 1 ? ImGui::GetTextLineHeightWithSpacing() : 0.0f;
  const float avail_w = ImGui::GetContentRegionAvail().x - 2 * ImGui::GetStyle().WindowPadding.x;
  // Sites sit one cell apart: sites x columns cells plus sites - 1 gaps across.
  const float fit_cell = std::min({avail_w / std::max(1, sites * map.columns + sites - 1),
                                   (map_h - header - 2 * ImGui::GetStyle().WindowPadding.y) / std::max(1, map.rows),
                                   kMaxFitCellPx * scale});
  const float cell = st->cell_px > 0 ? st->cell_px : std::max(2.0f, fit_cell);
  if (zoom_in) st->cell_px = std::min(cell * 1.5f, 400.0f * scale);
  if (zoom_out) st->cell_px = std::max(cell / 1.5f, 2.0f);
  const MapGeometry g = map_geometry(map, cell, header);

  ImGui::BeginChild("map", ImVec2(0, map_h), false, ImGuiWindowFlags_NoScrollbar | ImGuiWindowFlags_HorizontalScrollbar |
                                                       ImGuiWindowFlags_NoScrollWithMouse);
  if (st->scroll_x >= 0) {
    ImGui::SetScrollX(st->scroll_x);
    ImGui::SetScrollY(st->scroll_y);
    st->scroll_x = st->scroll_y = -1;
  }
  drag_to_scroll(scale);
  const ImVec2 origin = ImGui::GetCursorScreenPos();
  // A drag pans (drag_to_scroll clears the press), so a press released in place is a tap.
  const bool tapped = ImGui::InvisibleButton("##field", ImVec2(std::max(1.0f, g.width), std::max(1.0f, g.height)));
  const ImVec2 view_min = ImGui::GetWindowPos(), view_max(view_min.x + ImGui::GetWindowWidth(),
                                                          view_min.y + ImGui::GetWindowHeight());
  {
    TapTarget whole{"map", std::max(origin.x, view_min.x), std::max(origin.y, view_min.y),
                    std::min(origin.x + g.width, view_max.x), std::min(origin.y + g.height, view_max.y)};
    st->targets.push_back(whole);
  }
  ImDrawList* dl = ImGui::GetWindowDrawList();
  for (int s = 0; s < sites && header > 0; ++s)
    dl->AddText(ImVec2(origin.x + g.site_x(s), origin.y), colour(t.text), map.site_names[s].c_str());
  const bool openable = cell >= touch_px(scale);
  ImFont* font = ImGui::GetFont();
  const float label_px = std::min(ImGui::GetFontSize(), cell * 0.32f);
  for (const MapPlot& p : map.plots) {
    const MapGeometry::Rect r = g.plot_rect(p);
    const ImVec2 a(origin.x + r.x0, origin.y + r.y0), b(origin.x + r.x1, origin.y + r.y1);
    if (b.x < view_min.x || a.x > view_max.x || b.y < view_min.y || a.y > view_max.y) continue;
    if (p.pattern != MapPattern::outline_only) dl->AddRectFilled(a, b, colour(p.fill));
    draw_pattern(dl, a, b, p.pattern, p.pattern == MapPattern::outline_only ? t.muted_text : p.text, scale);
    const std::string& label = labels[p.plot_index];
    if (cell >= 40.0f * scale) {
      dl->AddText(font, label_px, ImVec2(a.x + 4 * scale, a.y + 3 * scale), colour(p.text), label.c_str());
      if (p.value && cell >= 64.0f * scale) {
        char v[32];
        std::snprintf(v, sizeof v, "%.4g", *p.value);
        dl->AddText(font, label_px, ImVec2(a.x + 4 * scale, b.y - label_px - 3 * scale), colour(p.text), v);
      }
    }
    // A plot partly off screen is a target by its visible part, when that
    // part is still fingertip-sized.
    const float vx0 = std::max(a.x, view_min.x), vy0 = std::max(a.y, view_min.y);
    const float vx1 = std::min(b.x, view_max.x), vy1 = std::min(b.y, view_max.y);
    if (openable && vx1 - vx0 >= touch_px(scale) && vy1 - vy0 >= touch_px(scale))
      st->targets.push_back({"plot " + label, vx0, vy0, vx1, vy1});
  }
  if (tapped) {
    const ImVec2 m = ImGui::GetIO().MousePos;
    const float x = m.x - origin.x, y = m.y - origin.y;
    const int hit = plot_at(map, g, x, y);
    if (openable && hit >= 0) {
      action = MapAction{MapAction::Kind::open_plot, map.plots[hit].plot_index};
    } else if (!openable) {
      // Zoom in around the tapped spot so that plots are big enough to open.
      const float k = kZoomedCellPx * scale / cell;
      st->cell_px = kZoomedCellPx * scale;
      st->scroll_x = std::max(0.0f, x * k - ImGui::GetWindowWidth() / 2);
      st->scroll_y = std::max(0.0f, y * k - ImGui::GetWindowHeight() / 2);
    }
  }
  ImGui::EndChild();

  if (!map.note.empty()) ImGui::TextUnformatted(map.note.c_str());
  // Legend: swatches with the same patterns as the map, labels in words,
  // laid out in rows as measured above.
  {
    ImDrawList* ldl = ImGui::GetWindowDrawList();
    const ImVec2 start = ImGui::GetCursorScreenPos();
    const float avail = ImGui::GetContentRegionAvail().x;
    float x = 0, y = 0;
    for (const LegendEntry& e : map.legend) {
      const float w = legend_width(e);
      if (x > 0 && x + w > avail) {
        x = 0;
        y += swatch + ImGui::GetStyle().ItemSpacing.y;
      }
      const ImVec2 a(start.x + x, start.y + y), b(a.x + swatch, a.y + swatch);
      if (e.pattern != MapPattern::outline_only) ldl->AddRectFilled(a, b, colour(e.fill));
      ldl->AddRect(a, b, colour(t.muted_text), 0, 0, 1.0f);
      draw_pattern(ldl, a, b, e.pattern, e.pattern == MapPattern::outline_only ? t.muted_text : text_on(e.fill), scale);
      ldl->AddText(ImVec2(b.x + 8 * scale, a.y + (swatch - ImGui::GetTextLineHeight()) / 2), colour(t.text),
                   e.label.c_str());
      x += w + spacing;
    }
    if (!map.legend.empty()) ImGui::Dummy(ImVec2(avail, y + swatch));
  }
  if (!map.scale_low.empty())
    ImGui::Text("Low: %s    High: %s", map.scale_low.c_str(), map.scale_high.c_str());
  return action;
}

}  // namespace furrow
