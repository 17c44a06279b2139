#include "app/field/screens/help_screen.h"

#include <imgui.h>

#include "app/field/screens/widgets.h"

#include "core/analysis.h"

namespace furrow {

void draw_help_screen(const Theme& t, float scale, float top_px) {
  const ScreenWindow window("Help", t, top_px);
  drag_to_scroll(scale);
  ImGui::PushStyleColor(ImGuiCol_ChildBg, to_imgui(t.confirm));
  ImGui::PushStyleColor(ImGuiCol_Text, to_imgui(t.confirm_text));
  ImGui::BeginChild("safety", ImVec2(0, ImGui::GetTextLineHeightWithSpacing() * 4), false);
  ImGui::TextWrapped("%s", kFieldSafetyNote);
  ImGui::EndChild();
  ImGui::PopStyleColor(2);
  ImGui::Spacing();
  ImGui::TextWrapped(
      "Record: the screen shows one plot at a time in the walking order. Type the value on the keypad (or a "
      "keyboard) and tap Save. Furrow checks it against the plan before saving; \"saved\" appears only after the "
      "value is on disk.");
  ImGui::TextWrapped(
      "Red banner: the value cannot be right (outside the possible range, too many decimals, not on the scale) and "
      "was not saved. Yellow banner: the value is possible but unusual (outside the usual range, a likely decimal "
      "slip, far from what the plot's block and treatment suggest): re-measure, or tap Confirm value if it is right.");
  ImGui::TextWrapped(
      "Skip plot records why a plot has no value (damaged, plants missing, flooded, not emerged). Undo last entry "
      "writes a new record that restores the value before it; nothing is ever overwritten. Go to plot takes a typed "
      "or scanned stake label.");
  ImGui::TextWrapped(
      "Before leaving lists what to fix while still in the field: conflicts between devices, outlier plots, values "
      "to check and values not yet recorded. Tap a line to open that plot.");
  ImGui::TextWrapped(
      "Field map shows the plots where they lie in the field: by status (each state has its own pattern too), by "
      "value (dark blue low, yellow high) or by residual (blue lower, orange higher than the plot's block and "
      "treatment predict). Tap a plot to record it; when plots are small, the first tap zooms in. Drag to move.");
  ImGui::TextWrapped(
      "Check shows the interim analysis of the trait: the analysis-of-variance table, means with their letter "
      "groups, CV, LSD and Tukey HSD, and the outlier plots and missing cells; tap one to open the plot.");
  ImGui::TextWrapped(
      "Station, at day's end: each device writes its bundle (Write this device's bundle) into the bundles folder; "
      "the station imports them all (Import bundles), settles each conflict by keeping one value, entering another "
      "or marking it missing, and exports the data and the report.");
  ImGui::TextWrapped("%s", kInterimCaution);
}

}  // namespace furrow
