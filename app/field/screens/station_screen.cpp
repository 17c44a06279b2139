#include "app/field/screens/station_screen.h"

#include <imgui.h>

#include <cstdio>

#include "app/field/screens/widgets.h"
#include "app/work/glossary.h"
#include "storage/keys.h"

namespace furrow {

std::optional<StationAction> draw_station_screen(const StationView& v, const Theme& t, float scale, float top_px,
                                                 StationScreenState* st) {
  st->targets.clear();
  std::optional<StationAction> action;
  const ScreenWindow window("Station", t, top_px, {{ImGuiCol_FrameBg, t.panel}, {ImGuiCol_PlotHistogram, t.accent}});
  ImGui::BeginChild("station", ImVec2(0, 0), false, ImGuiWindowFlags_NoScrollbar);
  drag_to_scroll(scale);
  const float h = touch_px(scale);
  const float width = ImGui::GetContentRegionAvail().x;
  const ButtonLook plain{t.button, t.button_text};
  // Day's-end actions.
  const struct { const char* label; StationAction::Kind kind; bool needs_trial; } buttons[] = {
      {"Import bundles", StationAction::Kind::import_bundles, false},
      {"Write this device's bundle", StationAction::Kind::write_bundle, true},
      {"Export data (CSV)", StationAction::Kind::export_data, true},
      {"Write report (HTML)", StationAction::Kind::export_report, true},
      {"Stake labels (PDF)", StationAction::Kind::write_labels, true},
      {"Field sheet (PDF)", StationAction::Kind::write_sheet, true}};
  bool first = true;
  for (const auto& b : buttons) {
    if (b.needs_trial && !v.trial) continue;
    const float w = button_width(b.label, scale);
    if (!first) flow_next(w);
    first = false;
    if (solid_button(b.label, ImVec2(w, h), plain, &st->targets) && !v.importing) action = StationAction{b.kind, 0, 0, {}};
  }
  // Sync over the local network: a device syncs, the station serves.
  const auto& sy = v.sync;
  if (sy.device_trial) {
    ImGui::Spacing();
    ImGui::Separator();
    if (!sy.paired_with.empty() && !st->pairing) {
      ImGui::TextWrapped("Station: %s", sy.paired_with.c_str());
      if (solid_button("Sync with station", ImVec2(button_width("Sync with station", scale), h), plain, &st->targets) &&
          !sy.syncing && !v.importing)
        action = StationAction{StationAction::Kind::sync_now, 0, 0, {}, {}, {}, {}};
      flow_next(button_width("Pair with another station", scale));
      if (solid_button("Pair with another station", ImVec2(button_width("Pair with another station", scale), h), plain,
                       &st->targets))
        st->pairing = true;
    } else {
      ImGui::TextWrapped("Pair with the station once: type the address and the pairing code the station shows.");
      ImGui::PushStyleVar(ImGuiStyleVar_FramePadding, ImVec2(ImGui::GetStyle().FramePadding.x, (h - ImGui::GetFontSize()) / 2));
      ImGui::PushItemWidth(std::min(width, 12 * h));
      ImGui::InputTextWithHint("##station_address", "station address, e.g. 192.168.1.20", st->station_address,
                               sizeof st->station_address);
      note_target("station address", &st->targets);
      ImGui::SameLine();
      ImGui::TextUnformatted("station address");
      ImGui::InputTextWithHint("##pairing_code", "pairing code", st->pairing_code, sizeof st->pairing_code,
                               ImGuiInputTextFlags_CharsDecimal);
      note_target("pairing code", &st->targets);
      ImGui::SameLine();
      ImGui::TextUnformatted("pairing code");
      ImGui::PopItemWidth();
      ImGui::PopStyleVar();
      if (solid_button("Pair and sync", ImVec2(button_width("Pair and sync", scale), h), plain, &st->targets) &&
          !sy.syncing && st->station_address[0] && st->pairing_code[0])
        action = StationAction{StationAction::Kind::sync_now, 0, 0, {}, {}, st->station_address, st->pairing_code};
    }
    if (sy.syncing) {
      char overlay[120];
      std::snprintf(overlay, sizeof overlay, "Syncing: %lld of %lld values sent", sy.done, sy.total);
      ImGui::ProgressBar(sy.total ? static_cast<float>(sy.done) / static_cast<float>(sy.total) : 0.0f, ImVec2(width, h),
                         overlay);
    }
  }
  if (sy.station_trial) {
    ImGui::Spacing();
    ImGui::Separator();
    if (!sy.serving) {
      if (solid_button("Serve devices on the network", ImVec2(button_width("Serve devices on the network", scale), h),
                       plain, &st->targets))
        action = StationAction{StationAction::Kind::start_serving, 0, 0, {}, {}, {}, {}};
    } else {
      banner(sy.serving_words.c_str(), t.saved, t.saved_text);
      if (sy.sessions) ImGui::Text("%d device(s) syncing now", sy.sessions);
      if (solid_button("Stop serving", ImVec2(button_width("Stop serving", scale), h), plain, &st->targets))
        action = StationAction{StationAction::Kind::stop_serving, 0, 0, {}, {}, {}, {}};
    }
  }

  // The outcome goes below the actions, so that they stay where the finger expects them.
  if (!st->message.empty())
    banner(st->message.c_str(), st->message_is_problem ? t.refuse : t.saved,
           st->message_is_problem ? t.refuse_text : t.saved_text);
  ImGui::TextWrapped("Bundles are read from %s (then moved to done or refused beside it); this device's bundle and "
                     "the exports go to %s and %s.",
                     v.bundle_folder.c_str(), v.outgoing_folder.c_str(), v.export_folder.c_str());
  if (v.importing || v.to_import) {
    char overlay[300];
    // Counts bundles read, as the message after the import does.
    std::snprintf(overlay, sizeof overlay, v.importing ? "Reading %zu of %zu: %s" : "Read %zu of %zu%s",
                  v.imported + (v.importing ? 1 : 0), v.to_import, v.importing ? v.importing_file.c_str() : "");
    ImGui::ProgressBar(v.to_import ? static_cast<float>(v.imported) / static_cast<float>(v.to_import) : 1.0f,
                       ImVec2(width, h), overlay);
  }
  for (const BundleOutcome& o : v.outcomes)
    ImGui::TextWrapped("%s %s: %s", o.merged ? "merged" : o.refused ? "REFUSED" : "waiting", o.file.c_str(),
                       o.message.c_str());

  // Conflicts of the open trial.
  if (v.trial) {
    ImGui::Spacing();
    ImGui::TextWrapped("%s to settle in %s", count_of(static_cast<long>(v.conflicts.size()), term::kConflict).c_str(),
                       v.trial->plan.name.c_str());
    ImGui::TextWrapped("Each settlement is saved as a new record with your name; nothing is overwritten.");
    for (size_t c = 0; c < v.conflicts.size(); ++c) {
      const ConflictCell& cell = v.conflicts[c];
      const ConflictId id_of_cell{cell.plot_index, cell.trait_index, cell.occasion};
      const std::string label = "plot " + v.trial->layout.plots[cell.plot_index].label;
      ImGui::Separator();
      ImGui::Text("%s, %s%s", label.c_str(), v.trial->plan.traits[cell.trait_index].name.c_str(),
                  cell.occasion > 1 ? (", occasion " + std::to_string(cell.occasion)).c_str() : "");
      first = true;
      for (size_t r = 0; r < cell.rows.size(); ++r) {
        const LiveObservation& row = cell.rows[r];
        const std::string shown = "Keep " + (row.value ? *row.value : "missing: " + row.missing_reason.value_or("")) +
                                  " (" + row.observer + ")";
        const std::string id = shown + "##keep" + std::to_string(c) + "_" + std::to_string(r);
        const float w = button_width(shown.c_str(), scale);
        if (!first) flow_next(w);
        first = false;
        if (solid_button(id.c_str(), ImVec2(w, h), plain, &st->targets, "keep " + label + " " + std::to_string(r)))
          action = StationAction{StationAction::Kind::keep, c, r, id_of_cell, row.key, {}};
      }
      const std::string other = "Other value or missing##other" + std::to_string(c);
      flow_next(button_width("Other value or missing", scale));
      if (solid_button(other.c_str(), ImVec2(button_width("Other value or missing", scale), h), plain, &st->targets,
                       "other " + label)) {
        st->editing = id_of_cell;
        st->typed[0] = 0;
      }
      if (st->editing == id_of_cell) {
        ImGui::PushItemWidth(std::min(width, 12 * h));
        ImGui::PushStyleVar(ImGuiStyleVar_FramePadding,
                            ImVec2(ImGui::GetStyle().FramePadding.x, (h - ImGui::GetFontSize()) / 2));
        ImGui::InputTextWithHint(("##typed" + std::to_string(c)).c_str(), "value, or why it is missing", st->typed,
                                 sizeof st->typed);
        note_target("typed " + label, &st->targets);
        ImGui::PopStyleVar();
        ImGui::PopItemWidth();
        flow_next(button_width("Save as value", scale));
        if (solid_button(("Save as value##v" + std::to_string(c)).c_str(), ImVec2(button_width("Save as value", scale), h),
                         plain, &st->targets, "save value " + label) && st->typed[0])
          action = StationAction{StationAction::Kind::new_value, c, 0, id_of_cell, {}, st->typed};
        flow_next(button_width("Save as missing", scale));
        if (solid_button(("Save as missing##m" + std::to_string(c)).c_str(),
                         ImVec2(button_width("Save as missing", scale), h), plain, &st->targets,
                         "save missing " + label) && st->typed[0])
          action = StationAction{StationAction::Kind::mark_missing, c, 0, id_of_cell, {}, st->typed};
      }
    }
  }

  // The devices this station's trial takes bundles from.
  if (v.trial && v.trial->role == "station" && v.devices.size() > 1) {
    ImGui::Spacing();
    ImGui::Separator();
    ImGui::Text("Devices of this trial");
    ImGui::TextWrapped("Bundles are merged only from these devices, each checked by its key. Revoke a device that is "
                       "lost or stolen: its later bundles are refused; what it brought before stays, marked.");
    // "2026-05-01T07:00:00.000Z" as people read it: "2026-05-01 07:00 UTC".
    const auto when = [](const std::string& iso) {
      return iso.size() < 16 ? iso : iso.substr(0, 10) + " " + iso.substr(11, 5) + " UTC";
    };
    for (const DeviceRecord& d : v.devices) {
      const Enrolment& e = d.enrolment;
      if (e.role == "station") continue;
      ImGui::Separator();
      const std::string brought =
          d.bundles_merged ? count_of(d.bundles_merged, "bundle") + " merged, the last " + when(d.last_merged_at) +
                                 " (" + count_of(d.last_rows_added, "new value") + ")"
                           : "no bundle merged yet";
      ImGui::TextWrapped("%s  (device %s, key %s)", e.label.c_str(), e.device_id.c_str(),
                         key_fingerprint(e.public_key).c_str());
      ImGui::TextWrapped("Enrolled %s by %s; %s in the log; %s", when(e.enrolled_at).c_str(), e.enrolled_by.c_str(),
                         count_of(d.rows_in_log, "value").c_str(), brought.c_str());
      for (const DeviceDay& day : v.sync.day)
        if (day.device_id == e.device_id && !e.revoked()) {
          const std::string words = day.synced_today ? "Synced today, last " + when(day.last_sync) + "; brought " +
                                                           count_of(day.rows_today, "value") + " today"
                                                     : "Not synced today" + (day.last_sync.empty() ? std::string()
                                                                                                  : " (last " + when(day.last_sync) + ")");
          if (day.synced_today) ImGui::TextWrapped("%s", words.c_str());
          else banner(words.c_str(), t.confirm, t.confirm_text);
          note_target((day.synced_today ? "synced today " : "not synced today ") + e.device_id, &st->targets);
        }
      if (e.revoked()) {
        banner(("Revoked " + when(*e.revoked_at) + " by " + e.revoked_by.value_or("?") +
                ": its later bundles are refused")
                   .c_str(),
               t.refuse, t.refuse_text);
        continue;
      }
      if (st->revoking != e.device_id) {
        const std::string label = "Revoke " + e.label + "...##revoke" + e.device_id;
        if (solid_button(label.c_str(), ImVec2(button_width(("Revoke " + e.label + "...").c_str(), scale), h), plain,
                         &st->targets, "revoke " + e.device_id))
          st->revoking = e.device_id;
      } else {
        const std::string yes = "Revoke " + e.label + ": refuse its later bundles";
        const ButtonLook danger{t.refuse, t.refuse_text};
        if (solid_button((yes + "##yes" + e.device_id).c_str(), ImVec2(button_width(yes.c_str(), scale), h), danger,
                         &st->targets, "confirm revoke " + e.device_id)) {
          action = StationAction{StationAction::Kind::revoke_device, 0, 0, {}, {}, e.device_id};
          st->revoking.clear();
        }
        flow_next(button_width("Keep it", scale));
        if (solid_button(("Keep it##no" + e.device_id).c_str(), ImVec2(button_width("Keep it", scale), h), plain,
                         &st->targets, "keep device " + e.device_id))
          st->revoking.clear();
      }
    }
  }

  // Every trial's completeness.
  ImGui::Spacing();
  ImGui::Separator();
  ImGui::Text("Trials on this device");
  for (const TrialSummary& s : v.trials) {
    if (!s.problem.empty()) {
      ImGui::TextWrapped("%s: cannot be read: %s", s.file_name.c_str(), s.problem.c_str());
      continue;
    }
    ImGui::TextWrapped("%s: %.0f %% collected (%d of %d cells), last change %s", s.name.c_str(), s.progress.percent(),
                       s.progress.cells_done, s.progress.cells_required, s.progress.last_change.substr(0, 16).c_str());
  }
  ImGui::Dummy(ImVec2(0, h));
  ImGui::EndChild();
  return action;
}

}  // namespace furrow
