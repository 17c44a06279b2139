#pragma once
// The Station screen, for day's end: import every bundle in a folder (with
// progress), settle the conflicts of the open trial (keep one of the values,
// enter a new one, or mark the cell missing), see every trial's
// completeness, write this device's bundle, export clean data and the report;
// at a station, see the enrolled devices (who enrolled each, what it brought)
// and revoke a lost one (two taps: Revoke, then the named confirmation).

#include <optional>
#include <string>
#include <vector>

#include "app/field/screens/record_screen.h"
#include "app/work/station.h"
#include "app/work/sync.h"
#include "app/work/theme.h"
#include "app/work/trial_summary.h"
#include "storage/enrolment.h"
#include "storage/settle.h"

namespace furrow {

struct StationView {
  std::string outgoing_folder;      // where this device's bundle is written
  std::string bundle_folder, export_folder;
  bool importing = false;
  size_t imported = 0, to_import = 0;
  std::string importing_file;
  std::vector<BundleOutcome> outcomes;       // of the last import
  const StoredTrial* trial = nullptr;        // the open trial, if any
  std::vector<ConflictCell> conflicts;       // of the open trial
  std::vector<TrialSummary> trials;          // in the data folder
  std::vector<DeviceRecord> devices;         // the open trial's enrolled devices (a station's trial)
  // Sync over the local network (app/work/sync.h).
  struct Sync {
    bool station_trial = false;       // the open trial is the station's: serving is offered
    bool serving = false;
    std::string serving_words;        // address, port and pairing code, for the devices
    int sessions = 0;                 // syncing now
    std::vector<DeviceDay> day;       // the open trial's devices today
    bool device_trial = false;        // a device's copy: Sync is offered
    std::string paired_with;          // "192.168.1.20:47110", empty when not paired
    bool syncing = false;
    long long done = 0, total = 0;    // values moved of those known to move
  } sync;
};

// A conflict's cell, by what it is (not by its place in a list that another
// program's merge or settlement may change under the finger).
struct ConflictId {
  size_t plot_index = 0, trait_index = 0;
  int occasion = 1;
  bool operator==(const ConflictId&) const = default;
};

struct StationScreenState {
  std::optional<ConflictId> editing;  // conflict whose value or reason is being typed
  char typed[64] = {};
  std::string message;               // outcome of the last action
  bool message_is_problem = false;
  std::vector<TapTarget> targets;    // rebuilt every frame
  std::string revoking;              // the device whose revocation asks "are you sure"
  char station_address[128] = {};    // typed to pair with a station
  char pairing_code[32] = {};
  bool pairing = false;              // the pairing fields are open
};

struct StationAction {
  enum class Kind { import_bundles, write_bundle, export_data, export_report, keep, new_value, mark_missing,
                    revoke_device, write_labels, write_sheet, start_serving, stop_serving, sync_now } kind = Kind::import_bundles;
  size_t conflict = 0, row = 0;      // keep: which conflict and which of its rows, as drawn
  ConflictId cell;                   // keep, new_value, mark_missing: the cell
  ObservationKey keep{};             // keep: the row whose value stands
  std::string text{};                // new_value: the value; mark_missing: the reason; revoke_device: the device id;
                                     // sync_now: the station's address (empty: as paired)
  std::string code{};                // sync_now: the pairing code (first time)
};

std::optional<StationAction> draw_station_screen(const StationView& view, const Theme& theme, float scale,
                                                 float top_px, StationScreenState* state);

}  // namespace furrow
