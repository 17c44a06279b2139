#include "app/cli/cli_station.h"
#include "app/cli/output_safety.h"
#include "app/work/glossary.h"

#include <iostream>
#include <map>
#include <nlohmann/json.hpp>

#include "core/entry_checks.h"
#include "storage/bundle.h"
#include "storage/enrolment.h"
#include "storage/keys.h"
#include "storage/settle.h"
#include "storage/trial_store.h"

namespace furrow {
namespace {

constexpr int kExitBadInput = 2;

int fail(const std::string& message) {
  std::cerr << terminal_safe(named_once(message)) << "\n";
  return kExitBadInput;
}

// `labels`: each enrolled device's name for people.
std::string row_text(const LiveObservation& r, const std::map<std::string, std::string>& labels) {
  const auto label = labels.find(r.key.device_id);
  return r.key.device_id + "/" + std::to_string(r.key.sequence) + "  " +
         (r.value ? *r.value : "missing: " + r.missing_reason.value_or("")) + "  by " + r.observer + " at " +
         r.recorded_at + (label != labels.end() ? " on " + label->second : "");
}

std::map<std::string, std::string> device_labels(Database& db) {
  std::map<std::string, std::string> out;
  if (auto list = list_enrolments(db))
    for (const Enrolment& e : *list) out[e.device_id] = e.label;
  return out;
}

}  // namespace

int run_bundle(const std::string& db_path, const std::string& out, bool everything) {
  auto open = open_trial_database(db_path);
  if (!open) return fail(db_path + ": " + open.problem().message);
  auto m = write_bundle(open->db, open->trial, out, everything);
  if (!m) return fail(m.problem().message);
  std::cout << "bundle " << out << ": " << count_of(m->observations, "observation") << ", "
            << count_of(m->replacements, "link") << ", from " << m->maker_role << " " << m->maker_device_id
            << ", signed with key " << key_fingerprint(m->signer_key) << "\n";
  return 0;
}

int run_merge(const std::string& db_path, const std::vector<std::string>& bundles) {
  auto open = open_trial_database(db_path);
  if (!open) return fail(db_path + ": " + open.problem().message);
  int refused = 0;
  for (const std::string& b : bundles) {
    auto out = merge_bundle(open->db, open->trial, b);
    if (!out) {
      const std::string& why = out.problem().message;
      std::cerr << (why.find(": refused: ") == std::string::npos ? "refused " : "") << terminal_safe(why) << "\n";
      ++refused;
      continue;
    }
    std::cout << "merged " << b << " (from " << out->manifest.maker_role << " " << out->manifest.maker_device_id
              << "): " << count_of(out->observations_added, "new observation") << ", "
              << count_of(out->replacements_added, "new link") << "\n";
  }
  auto conflicts = list_conflicts(open->db, open->trial);
  if (conflicts) std::cout << count_of(static_cast<long>(conflicts->size()), term::kConflict) << " to settle\n";
  return refused ? kExitBadInput : 0;
}

int run_conflicts(const std::string& db_path, bool json) {
  auto open = open_trial_database(db_path, Access::read_only);
  if (!open) return fail(db_path + ": " + open.problem().message);
  auto conflicts = list_conflicts(open->db, open->trial);
  if (!conflicts) return fail(db_path + ": " + conflicts.problem().message);
  const StoredTrial& t = open->trial;
  if (json) {
    nlohmann::json out = nlohmann::json::array();
    for (const ConflictCell& c : *conflicts) {
      nlohmann::json rows = nlohmann::json::array();
      for (const auto& r : c.rows)
        rows.push_back({{"device", r.key.device_id}, {"sequence", r.key.sequence},
                        {"value", r.value ? nlohmann::json(*r.value) : nlohmann::json(nullptr)},
                        {"missing_reason", r.missing_reason ? nlohmann::json(*r.missing_reason) : nlohmann::json(nullptr)},
                        {"observer", r.observer}, {"recorded_at", r.recorded_at}, {"note", r.note}});
      out.push_back({{"plot", t.layout.plots[c.plot_index].label}, {"trait", t.plan.traits[c.trait_index].code},
                     {"occasion", c.occasion}, {"rows", rows}});
    }
    bool replaced = false;
    std::cout << json_text(out, &replaced) << "\n";
    if (replaced)
      std::cerr << "note: some names, notes or values held bytes that are not valid UTF-8; they are shown as U+FFFD\n";
    return 0;
  }
  std::cout << count_of(static_cast<long>(conflicts->size()), term::kConflict) << "\n";
  const auto labels = device_labels(open->db);
  for (const ConflictCell& c : *conflicts) {
    std::cout << "plot " << terminal_safe(t.layout.plots[c.plot_index].label) << ", "
              << terminal_safe(t.plan.traits[c.trait_index].code) << ", occasion " << c.occasion << ":\n";
    for (const auto& r : c.rows) std::cout << "  " << terminal_safe(row_text(r, labels)) << "\n";
  }
  return 0;
}

int run_settle(const SettleRequest& r) {
  const int ways = !r.keep.empty() + !r.keep_value.empty() + !r.value.empty() + !r.missing.empty();
  if (ways != 1)
    return fail("settle: give exactly one of --keep-value V, --keep DEVICE/SEQUENCE, --value V or --missing REASON");
  auto open = open_trial_database(r.db);
  if (!open) return fail(r.db + ": " + open.problem().message);
  const StoredTrial& t = open->trial;
  auto conflicts = list_conflicts(open->db, t);
  if (!conflicts) return fail(r.db + ": " + conflicts.problem().message);
  const ConflictCell* cell = nullptr;
  for (const ConflictCell& c : *conflicts)
    if (t.layout.plots[c.plot_index].label == r.plot && t.plan.traits[c.trait_index].code == r.trait &&
        c.occasion == r.occasion)
      cell = &c;
  if (!cell)
    return fail(r.db + ": plot " + r.plot + ", trait " + r.trait + ", occasion " + std::to_string(r.occasion) +
                " is not in conflict (see furrow conflicts)");
  Settlement s;
  s.by = r.by;
  s.note = r.note;
  if (!r.keep_value.empty()) {
    // The row holding that value, compared as values (5.5 is 5.50).
    const Trait& trait = t.plan.traits[cell->trait_index];
    auto parsed = parse_trait_value(trait, r.keep_value);
    if (!parsed) return fail("settle: --keep-value " + r.keep_value + ": " + parsed.problem().message);
    LiveObservation wanted;
    wanted.value = parsed->text;
    wanted.number = parsed->number;
    std::vector<const LiveObservation*> holding;
    for (const auto& row : cell->rows)
      if (row.value && value_identity(row) == value_identity(wanted)) holding.push_back(&row);
    if (holding.empty())
      return fail("settle: no row of plot " + r.plot + ", " + r.trait + " holds " + r.keep_value +
                  " (see furrow conflicts)");
    if (holding.size() > 1) {
      std::string keys;
      for (const auto* row : holding) keys += " " + row->key.device_id + "/" + std::to_string(row->key.sequence);
      return fail("settle: " + std::to_string(holding.size()) + " rows hold " + r.keep_value +
                  "; name the one to keep with --keep (one of" + keys + ")");
    }
    s.kind = Settlement::Kind::keep;
    s.keep = holding.front()->key;
  } else if (!r.keep.empty()) {
    s.kind = Settlement::Kind::keep;
    const auto slash = r.keep.find('/');
    if (slash == std::string::npos) return fail("settle: --keep is DEVICE/SEQUENCE, as furrow conflicts lists them");
    s.keep.device_id = r.keep.substr(0, slash);
    try {
      s.keep.sequence = std::stoll(r.keep.substr(slash + 1));
    } catch (...) {
      return fail("settle: --keep is DEVICE/SEQUENCE, as furrow conflicts lists them");
    }
  } else if (!r.value.empty()) {
    auto parsed = parse_acceptable_value(t.plan.traits[cell->trait_index], r.value);
    if (!parsed) return fail("settle: " + parsed.problem().message);
    s.kind = Settlement::Kind::new_value;
    s.value = parsed->text;
    s.number = parsed->number;
  } else {
    s.kind = Settlement::Kind::missing;
    s.missing_reason = r.missing;
  }
  auto key = settle_conflict(open->db, t, *cell, s);
  if (!key) return fail(r.db + ": " + key.problem().message);
  const std::string kept = s.kind == Settlement::Kind::keep
                               ? [&] {
                                   for (const auto& row : cell->rows)
                                     if (row.key.device_id == s.keep.device_id && row.key.sequence == s.keep.sequence)
                                       return row.value ? *row.value : "missing (" + row.missing_reason.value_or("") + ")";
                                   return std::string("?");
                                 }()
                           : s.kind == Settlement::Kind::new_value ? s.value
                                                                   : "missing (" + s.missing_reason + ")";
  std::cout << "settled plot " << r.plot << ", " << r.trait << ": " << terminal_safe(kept) << ", saved as row "
            << key->device_id << "/" << key->sequence
            << " by " << r.by << "\n";
  return 0;
}

int run_trial_close(const std::string& db_path) {
  auto open = open_trial_database(db_path);
  if (!open) return fail(db_path + ": " + open.problem().message);
  if (auto s = close_trial(open->db); !s) return fail(db_path + ": " + s.problem().message);
  std::cout << "closed " << open->trial.plan.name << "\n";
  return 0;
}

int run_trial_copy(const std::string& station_path, const std::string& device_path, const DeviceEnrolment& who) {
  if (auto s = copy_trial_for_device(station_path, device_path, who); !s) return fail(s.problem().message);
  auto open = open_trial_database(device_path);
  if (!open) return fail(device_path + ": " + open.problem().message);
  auto key = own_key(open->db);
  std::cout << "copied " << open->trial.plan.name << " to " << device_path << " (device " << open->trial.device_id
            << ", key " << (key ? key_fingerprint(key->public_key) : "?") << "), enrolled at " << station_path
            << " by " << who.by << "\n";
  return 0;
}

int run_device_list(const std::string& db_path, bool json) {
  auto open = open_trial_database(db_path, Access::read_only);
  if (!open) return fail(db_path + ": " + open.problem().message);
  auto records = device_records(open->db);
  if (!records) return fail(db_path + ": " + records.problem().message);
  if (json) {
    nlohmann::json out = nlohmann::json::array();
    for (const DeviceRecord& r : *records) {
      const Enrolment& e = r.enrolment;
      out.push_back({{"device", e.device_id}, {"role", e.role}, {"label", e.label},
                     {"key", key_fingerprint(e.public_key)}, {"enrolled_by", e.enrolled_by},
                     {"enrolled_at", e.enrolled_at}, {"revoked_at", e.revoked_at ? nlohmann::json(*e.revoked_at) : nlohmann::json(nullptr)},
                     {"revoked_by", e.revoked_by ? nlohmann::json(*e.revoked_by) : nlohmann::json(nullptr)},
                     {"revoked_reason", e.revoked_reason ? nlohmann::json(*e.revoked_reason) : nlohmann::json(nullptr)},
                     {"succeeds", e.succeeds_device_id.empty() ? nlohmann::json(nullptr) : nlohmann::json(e.succeeds_device_id)},
                     {"succeeds_up_to", e.succeeds_up_to}, {"rows_in_log", r.rows_in_log},
                     {"bundles_merged", r.bundles_merged},
                     {"last_merged_at", r.last_merged_at.empty() ? nlohmann::json(nullptr) : nlohmann::json(r.last_merged_at)},
                     {"last_rows_added", r.last_rows_added}});
    }
    bool replaced = false;
    std::cout << json_text(out, &replaced) << "\n";
    return 0;
  }
  std::cout << count_of(static_cast<long>(records->size()), "enrolled key") << " in " << open->trial.plan.name << "\n";
  for (const DeviceRecord& r : *records) {
    const Enrolment& e = r.enrolment;
    std::string line = e.device_id + "  " + e.label + (e.role == "station" ? " (this trial's station)" : "") +
                       "  key " + key_fingerprint(e.public_key) + "\n    enrolled " + e.enrolled_at + " by " +
                       e.enrolled_by;
    if (!e.succeeds_device_id.empty())
      line += "; new identity of " + e.succeeds_device_id + " (its rows up to " + std::to_string(e.succeeds_up_to) + ")";
    if (e.revoked())
      line += "\n    REVOKED " + *e.revoked_at + " by " + e.revoked_by.value_or("?") +
              (e.revoked_reason && !e.revoked_reason->empty() ? " (" + *e.revoked_reason + ")" : "") + ": its " +
              count_of(r.rows_in_log, "row") + " merged before stay in the log, marked device_revoked in exports";
    line += "\n    " + count_of(r.rows_in_log, "row") + " in the log";
    if (e.role != "station")
      line += r.bundles_merged ? ", " + count_of(r.bundles_merged, "bundle") + " merged, the last " + r.last_merged_at +
                                     " (" + count_of(r.last_rows_added, "new row") + ")"
                               : ", no bundle merged yet";
    for (size_t at = 0; at <= line.size();) {
      const size_t end = std::min(line.find('\n', at), line.size());
      std::cout << terminal_safe(line.substr(at, end - at)) << "\n";
      at = end + 1;
    }
  }
  return 0;
}

int run_device_revoke(const std::string& db_path, const std::string& named, const std::string& by,
                      const std::string& reason) {
  auto open = open_trial_database(db_path);
  if (!open) return fail(db_path + ": " + open.problem().message);
  if (open->trial.role != "station") return fail(db_path + ": only the station's trial revokes devices");
  // A device by its id or by its label ("Tablet 3"), when one device has it.
  std::string device = named;
  if (auto list = list_enrolments(open->db)) {
    std::vector<std::string> ids;
    for (const Enrolment& e : *list)
      if (e.label == named && e.device_id != named) ids.push_back(e.device_id);
    if (ids.size() > 1) return fail(db_path + ": " + std::to_string(ids.size()) + " devices are labelled '" + named +
                                    "'; name one by its id (furrow device list)");
    if (ids.size() == 1) device = ids.front();
  }
  if (auto s = revoke_device(open->db, device, by, reason); !s) return fail(db_path + ": " + s.problem().message);
  std::cout << "revoked device " << device << " by " << by
            << ": its later bundles are refused; the rows merged before stay, marked device_revoked in exports\n";
  return 0;
}

int run_device_enrol(const std::string& station_path, const std::string& device_path, const DeviceEnrolment& who) {
  if (auto s = enrol_existing_device(station_path, device_path, who); !s) return fail(s.problem().message);
  std::cout << "enrolled " << device_path << " at " << station_path << " by " << who.by << "\n";
  return 0;
}

int run_device_renew(const std::string& station_path, const std::string& device_path, const DeviceEnrolment& who) {
  auto out = renew_device_identity(station_path, device_path, who);
  if (!out) return fail(out.problem().message);
  std::cout << device_path << " has a new identity: device " << out->new_device_id << " (was " << out->old_device_id
            << ")\n  rows the station already holds, kept under the old id: " << out->kept_under_old_id
            << "\n  rows moved to the new id: " << out->rows_moved << " (nothing lost)\n  the old file is kept as "
            << out->kept_file << "\n  next: write this copy's bundle (furrow bundle) and merge it at the station\n";
  return 0;
}

}  // namespace furrow
