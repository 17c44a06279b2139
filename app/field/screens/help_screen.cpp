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
      "Today's walk (the wide button on Record): choose the traits you record today, the occasion and the blocks, "
      "and whether you record one trait across the plots or every trait on each plot. Record opens at the next plot "
      "of the walk without a value and counts what the walk still lacks. The choice is kept for this trial.");
  ImGui::TextWrapped(
      "Record: type the value on the keypad, or on a keyboard (digits, point, Backspace, Enter), and tap Save. "
      "Furrow checks it against the plan before saving; \"saved\" appears only after the value is on disk. What you "
      "type belongs to the plot on screen: moving to another plot, trait or screen drops it and says so.");
  ImGui::TextWrapped(
      "Red banner: the value cannot be right (outside the possible range, too many decimals, not on the scale) and "
      "was not saved. Yellow banner: the value is possible but unusual; every reason is listed (outside the usual "
      "range, a likely decimal slip, far from what the plot's block and treatment suggest). Re-measure, tap Confirm "
      "value if the value on screen is right, or, for a likely slip, tap Save ... instead to save the value you "
      "probably meant. Changing the typed value withdraws the question. Green banner: saved, with any note.");
  ImGui::TextWrapped(
      "Skip plot records why a plot has no value (damaged, plants missing, flooded, not emerged, or other with a "
      "note). Note... keeps a note with the plot's value. Undo last entry writes a new record that restores the "
      "value before it; nothing is ever overwritten. A stake label scanned with a barcode scanner (or typed in Go to "
      "plot) opens that plot.");
  ImGui::TextWrapped(
      "Before leaving lists what today's walk still lacks, one line per plot with every finding: conflicts between "
      "devices, outlier plots, values to check, values not yet recorded; traits outside the walk are counted in one "
      "line. Tap a line to open that plot; when a value is right after all, tap Value is right there. A value "
      "confirmed when it was entered is asked about again if the analysis later finds it far from what the other "
      "plots predict: that is a new question.");
  ImGui::TextWrapped(
      "Field map shows the plots where they lie in the field: by status (each state has its own pattern too), by "
      "value (dark purple for low values, through blue and green, to yellow for high ones) or by residual (blue "
      "lower, orange higher than the plot's block and treatment predict). Tap a plot to record it; when plots are "
      "small, the first tap zooms in. Drag to move.");
  ImGui::TextWrapped(
      "Large text: Settings makes text and buttons larger or smaller (75 to 300 %%). When the screens' names no "
      "longer fit in two rows, one Screens button lists them. Every screen scrolls when you drag it.");
  ImGui::TextWrapped(
      "Check shows first what to act on (outlier plots and missing cells; tap one to open the plot), then the "
      "interim analysis of the trait: the analysis-of-variance table, means (highest first, or in the plan's "
      "order) with their letter groups, CV, LSD and Tukey HSD. Outlier plots of every trait lists them for all "
      "traits at once.");
  ImGui::TextWrapped(
      "Station, at day's end: each device writes its bundle (Write this device's bundle) into the bundles folder; "
      "the station imports them all (Import bundles), settles each conflict by keeping one value, entering another "
      "or marking it missing, and exports the data and the report.");
  ImGui::TextWrapped("%s", kInterimCaution);
}

}  // namespace furrow
