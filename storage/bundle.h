#pragma once
// Day's-end bundles and merging.
//
// A bundle is one SQLite file (PRAGMA application_id 0x46524231, "FRB1";
// journal mode DELETE, so the file stands alone) with these tables:
//   manifest(key, value)   format "furrow-bundle", version 2, trial_uid,
//                          trial_name, plan_hash, maker_device_id, maker_role
//                          ("station" or "device"), created_at, observations,
//                          replacements, checksum
//   observation(...)       log rows: device_id, sequence, plot_label,
//                          trait_code, occasion, value, number,
//                          missing_reason, note, observer, recorded_at,
//                          confirmed_checks
//   replacement(...)       device_id, sequence, replaced_device_id,
//                          replaced_sequence
//   holding(device_id, max_sequence)  what the maker holds of each device's log
// The checksum is SHA-1 (FIPS 180-4) over a canonical serialisation of the
// manifest's stored text (less the checksum), the holdings and every row and
// link in key order; it detects a damaged file. It is NOT a signature: anyone
// who edits a bundle can write it again, so nothing below relies on it.
//
// A device's bundle holds its own log rows the station is not known to hold
// (every row the first time); the station's bundle holds its whole log.
// Merging adds the rows the database does not hold, in one transaction: the
// same bundles in any order, any number of times, give the same log, except
// that a bundle whose device's earlier rows have not arrived waits for them
// (R5).
//
// Trust. A bundle arrives from a device the station does not control, so it
// is untrusted input, checked whole before anything is written:
//   R1. The file is opened read-only and immutable, in SQLite's defensive
//       mode with the schema untrusted, triggers and views off, strings of
//       at most 1 MB and a bounded number of steps; its schema must be
//       exactly a bundle's (no view, trigger, virtual table, extra column)
//       before any query; then format, integrity, counts and checksum.
//   R2. Another trial's bundle, or one made with another plan, is refused.
//   R3. A station takes bundles from devices only; a device from its station
//       only. A device's bundle carries rows of its maker only, and its maker
//       is not the station's own device id.
//   R4. A row may replace rows of its own device only; only the station's
//       rows (settlements) replace another device's.
//   R5. A device's sequences start at 1 and follow on from what the station
//       holds of it with no gap; a held row must come back identical (a
//       differing one means two files share a device id: a copied tablet).
//   R6. Every row is checked as an entry is: its plot and trait are in the
//       plan, the occasion exists, a value or a reason (not both), the value
//       parses for the trait's kind within the hard limits, decimals, scale
//       and categories, is written as Furrow writes it and its number
//       matches; the note, observer, reason and time are of sane form.
//   R7. Values agree as values (5.5 and 5.50; see value_identity).
// What this does not protect against: a bundle made on an enrolled device by
// whoever holds it (a stolen, unlocked tablet writes rows as that device), and
// a forged bundle that breaks no rule above: without signatures a forger can
// write rows under a device id it has seen. Keys and signatures per device,
// with enrolment and revocation at the station, are the next step.

#include <cstdint>
#include <string>
#include <vector>

#include "core/result.h"
#include "storage/sqlite_db.h"
#include "storage/trial_store.h"

namespace furrow {

struct BundleManifest {
  std::string trial_uid, trial_name, plan_hash, maker_device_id, maker_role, created_at, checksum;
  std::int64_t observations = 0, replacements = 0;
};

// SHA-1 of the plan and layout as stored (name, design, grid, sites,
// factors and levels, traits and their limits, every plot's label and
// position and treatment), 40 hex digits.
std::string plan_hash(const StoredTrial& trial);

// Writes a bundle of `db`'s log to `out_path` (replaced when it exists; written
// to a temporary file first and renamed). `everything`: every row, not only
// those the station is not known to hold (a station's bundle is always
// everything). Returns the manifest.
Result<BundleManifest> write_bundle(Database& db, const StoredTrial& trial, const std::string& out_path,
                                    bool everything = false);

// Reads and checks a bundle (format, integrity, checksum) without merging.
Result<BundleManifest> read_bundle_manifest(const std::string& path);

struct MergeOutcome {
  BundleManifest manifest;
  std::int64_t observations_added = 0, replacements_added = 0;   // 0 and 0: nothing new
};

// Merges one bundle into `db` (whose trial is `trial`) in one transaction.
// A device that merges a station's bundle learns what the station holds.
// Writes the checksum of what a bundle file now holds into its manifest -
// what anyone who edits a bundle can do, since the checksum only detects
// damage. The tests that play a forger use it; signatures are what stop one.
Status reseal_bundle(const std::string& path);

// Whether merge_bundle refused a bundle only because the device's earlier
// rows have not arrived yet (it merges once its earlier bundle has).
bool waits_for_earlier_bundle(const Problem& problem);

Result<MergeOutcome> merge_bundle(Database& db, const StoredTrial& trial, const std::string& bundle_path);

// The log as text, one line per row in key order (observations, then
// replacements): equal dumps mean equal logs, whatever the merge order.
Result<std::string> canonical_log(Database& db);

// A device's own copy of a station's trial: the same uid, plan and layout, a
// new device id, and every row the station holds (through a station bundle).
Status copy_trial_for_device(const std::string& station_path, const std::string& device_path);

}  // namespace furrow
