#pragma once
// Day's-end bundles and merging.
//
// The file. A bundle is signed bytes around an SQLite database image:
//   bytes 0-15     "FURROW BUNDLE 3\n"
//   bytes 16-47    the signer's Ed25519 public key
//   bytes 48-111   the Ed25519 signature (libsodium crypto_sign_detached) of
//                  bytes 0-47 followed by bytes 112 to the end
//   bytes 112-119  the image's length in bytes, little-endian
//   bytes 120-     the SQLite database (PRAGMA application_id 0x46524231,
//                  "FRB1") with these tables:
//   manifest(key, value)   format "furrow-bundle", version 3, trial_uid,
//                          trial_name, plan_hash, maker_device_id, maker_role
//                          ("station" or "device"), created_at, observations,
//                          replacements (and nothing else)
//   observation(...)       log rows: device_id, sequence, plot_label,
//                          trait_code, occasion, value, number,
//                          missing_reason, note, observer, recorded_at,
//                          confirmed_checks
//   replacement(...)       device_id, sequence, replaced_device_id,
//                          replaced_sequence
//   holding(device_id, max_sequence)  what the maker holds of each device's log
// The signature covers every byte but itself: one byte changed anywhere, and
// the file is refused before its database is opened. A merged bundle is
// remembered by the BLAKE2b hash of its bytes (merging it again adds nothing).
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
//   R0. Signed. The station takes a bundle only when it is signed with the
//       key of a device it enrolled and has not revoked, and the manifest's
//       maker is that device; a device takes one only when it is signed with
//       its station's key (storage/enrolment.h: keys and enrolment). The
//       signature is checked before the database inside is opened.
//   R1. The database image is opened read-only in memory, in SQLite's
//       defensive mode with the schema untrusted, triggers and views off,
//       strings of at most 1 MB and a bounded number of steps; its schema
//       must be exactly a bundle's (no view, trigger, virtual table, extra
//       column) before any query; then format, integrity and counts.
//   R2. Another trial's bundle, or one made with another plan, is refused.
//   R3. A station takes bundles from devices only; a device from its station
//       only. A device's bundle carries rows of its maker only.
//   R4. A device's row may replace rows of its own device only (a renewed
//       device also its old id's rows up to the last one the station held
//       when it was renewed); only the station's rows (settlements) replace
//       another device's. At a device, its station's signed bundle is the
//       authority.
//   R5. A device's sequences start at 1 and follow on from what the station
//       holds of it with no gap; a held row must come back identical (a
//       differing one means two files share a device id: a copied tablet,
//       reported in words with the way out, furrow device renew).
//   R6. Every row is checked as an entry is: its plot and trait are in the
//       plan, the occasion exists, a value or a reason (not both), the value
//       parses for the trait's kind within the hard limits, decimals, scale
//       and categories, is written as Furrow writes it and its number
//       matches; the note, observer, reason and time are of sane form.
//   R7. Values agree as values (5.5 and 5.50; see value_identity).
// What signing protects against: a bundle made or altered by anyone who does
// not hold an enrolled device's file (a forged file, an edited one, one from
// another station or trial, a revoked device's); a damaged file. What it
// does not: whoever holds an enrolled device's trial file - a stolen, unlocked
// tablet, or a copy of its file - signs as that device until the station
// revokes it (the secret key lives in the trial file; the tablet's lock and
// disk encryption are what keep it). A revoked device's rows merged before
// stay in the log, marked (furrow devices lists them), for the station
// manager to judge.

#include <cstdint>
#include <map>
#include <utility>
#include <string>
#include <vector>

#include "core/result.h"
#include "storage/sqlite_db.h"
#include "storage/trial_store.h"

namespace furrow {

struct BundleManifest {
  std::string trial_uid, trial_name, plan_hash, maker_device_id, maker_role, created_at;
  std::int64_t observations = 0, replacements = 0;
  std::string file_hash;    // BLAKE2b-256 of the whole file, hex
  std::string signer_key;   // the Ed25519 public key it is signed with (32 bytes)
};

// BLAKE2b-256 of the plan and layout as stored (name, design, grid, sites,
// factors and levels, traits and their limits, every plot's label and
// position and treatment), 64 hex digits.
std::string plan_hash(const StoredTrial& trial);

// Writes a bundle of `db`'s log to `out_path`, signed with the file's own key
// (replaced when it exists; written to a temporary file first and renamed). `everything`: every row, not only
// those the station is not known to hold (a station's bundle is always
// everything). Returns the manifest.
Result<BundleManifest> write_bundle(Database& db, const StoredTrial& trial, const std::string& out_path,
                                    bool everything = false);

// A bundle for a network sync (app/work/sync.h), as bytes: the rows the
// receiver does not hold, a limited number at a time, so that a cut
// connection resumes where it stopped.
struct BundleSelection {
  std::map<std::string, std::int64_t> receiver_holds;   // device id -> the receiver holds its rows 1..n
  bool makers_rows_only = false;   // only this file's own rows (and the rows they replace)
  std::int64_t max_rows = 0;       // at most this many rows chosen, in key order (then the rows they replace); 0: all
};
Result<std::pair<BundleManifest, std::string>> bundle_for_sync(Database& db, const StoredTrial& trial,
                                                               const BundleSelection& selection);
// What `db` holds of each device's log with no gap: device id -> n (rows 1..n).
Result<std::map<std::string, std::int64_t>> held_without_gap(Database& db);
// A digest of `device_id`'s rows 1..upto in `db` (every field, and their
// links): two files that hold those rows alike give the same digest. One
// that lacks some of them gives "incomplete:<rows held>".
Result<std::string> rows_digest(Database& db, const std::string& device_id, std::int64_t upto);
// A device learns (from its station, in a sync) what the station holds.
Status learn_station_holdings(Database& db, const std::map<std::string, std::int64_t>& held);

// Reads and checks a bundle (its signature is the key's it names, format,
// integrity, counts) without merging, and without asking whether its signer
// may write here (merge_bundle does).
Result<BundleManifest> read_bundle_manifest(const std::string& path);

struct MergeOutcome {
  BundleManifest manifest;
  std::int64_t observations_added = 0, replacements_added = 0;   // 0 and 0: nothing new
};

// Whether merge_bundle refused a bundle only because the device's earlier
// rows have not arrived yet (it merges once its earlier bundle has).
bool waits_for_earlier_bundle(const Problem& problem);

// Merges one bundle into `db` (whose trial is `trial`) in one transaction,
// after every check above. A device that merges a station's bundle learns
// what the station holds.
Result<MergeOutcome> merge_bundle(Database& db, const StoredTrial& trial, const std::string& bundle_path);

// The log as text, one line per row in key order (observations, then
// replacements): equal dumps mean equal logs, whatever the merge order.
Result<std::string> canonical_log(Database& db);

// Who enrols a device and the label people know it by ("Tablet 3").
struct DeviceEnrolment {
  std::string label;   // empty: the device file's name
  std::string by;      // the station manager's name (required)
};

// A device's own copy of a station's trial: the same uid, plan and layout, a
// new device id and key pair, its station's public key, and every row the
// station holds (through a station bundle). The station's file records the
// enrolment (who, when, the device's public key).
Status copy_trial_for_device(const std::string& station_path, const std::string& device_path,
                             const DeviceEnrolment& who);

// Enrols a device copy that has no enrolment yet (made by a Furrow from before
// keys): the station learns its key, it learns the station's.
Status enrol_existing_device(const std::string& station_path, const std::string& device_path,
                             const DeviceEnrolment& who);

// Gives a device's copy a new identity (a copied tablet's file, whose rows
// the station refused because another copy shares its id): a new device id
// and key, enrolled at the station as the old id's successor; the old id's
// rows the station holds identically stay the old id's, every later row of
// the copy becomes the new id's (same plot, value, time, observer), so no row
// is lost. The old file is kept beside the new one.
struct RenewOutcome {
  std::string old_device_id, new_device_id, kept_file;
  std::int64_t kept_under_old_id = 0, rows_moved = 0;
};
Result<RenewOutcome> renew_device_identity(const std::string& station_path, const std::string& device_path,
                                           const DeviceEnrolment& who);

// The SQLite database inside a bundle, written as a file (to look inside).
Status unpack_bundle(const std::string& bundle_path, const std::string& image_path);
// Writes the SQLite file `image_path` as a bundle signed with the key of the
// trial file `signer_trial_path`: what anyone holding that file can do. The
// tests that play a hostile enrolled device use it.
Status seal_bundle(const std::string& image_path, const std::string& signer_trial_path, const std::string& bundle_path);

}  // namespace furrow
