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
// manifest (less the checksum) and every row in key order; it detects a
// damaged or altered file, it is not a signature.
//
// A device's bundle holds the log rows the station is not known to hold
// (every row of the log the first time), plus every row those replace, so
// that any bundle can be merged alone. Merging adds the rows the database
// does not hold, in one transaction: merging bundles in any order, any
// number of times, gives the same log (the union). A bundle for another
// trial, another plan, with a bad checksum, truncated or not a bundle is
// refused and the database is left as it was.

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
