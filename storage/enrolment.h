#pragma once
// Who may write into a trial: this file's own signing key, and the devices
// (at the station) or the station (at a device) whose signatures it accepts.
//
// Every trial file holds one Ed25519 key pair of its own (table
// signing_key), made with the file: the station's file the station's key, a
// device's copy that device's key. The station's file enrols each device
// copy it makes (table enrolment: device id, public key, a label for people,
// who enrolled it and when); a device's copy holds one enrolment, its
// station's. A station revokes a device by marking its enrolment; a device
// given a new identity (a copied tablet's file, renewed) is enrolled as the
// successor of its old id up to the last row of the old id the station held
// identically, and its rows may replace those rows.
//
// The secret key lives in the trial file: whoever holds the file (an
// unlocked tablet, a copy of the file) can sign as that device. The tablet's
// own lock and disk encryption protect it; revocation is the way out.

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "core/result.h"
#include "storage/keys.h"
#include "storage/sqlite_db.h"

namespace furrow {

struct Enrolment {
  std::string device_id;
  std::string role = "device";     // "device" or "station"
  std::string public_key;          // 32 bytes
  std::string label;               // for people: "Tablet 3", "Station"
  std::string enrolled_by, enrolled_at;
  std::optional<std::string> revoked_at, revoked_by, revoked_reason;
  std::string succeeds_device_id;  // a renewed device: its old id ("" for none)
  std::int64_t succeeds_up_to = 0; // ... and the old id's last row it may replace
  bool revoked() const { return revoked_at.has_value(); }
};

// This file's own key pair. Fails when the file has none.
Result<KeyPair> own_key(Database& db);
// Makes this file's key pair (once, in a new or upgraded file). A station's
// file also enrols its own key as the station.
Status make_own_key(Database& db, const std::string& device_id, const std::string& role);

Result<std::vector<Enrolment>> list_enrolments(Database& db);
Result<std::optional<Enrolment>> enrolment_by_key(Database& db, const std::string& public_key);
Result<std::optional<Enrolment>> enrolment_of(Database& db, const std::string& device_id);
// Adds an enrolment; an id or key enrolled already is refused.
Status add_enrolment(Database& db, const Enrolment& e);
// Marks a device's enrolment revoked (its later bundles are refused; the rows
// merged before stay). Revoking the station, an unknown or a revoked device is refused.
Status revoke_device(Database& db, const std::string& device_id, const std::string& by, const std::string& reason);

// Each enrolled key with what the log holds of it: the station manager's view
// of the devices (furrow device list, the Station screen).
struct DeviceRecord {
  Enrolment enrolment;
  std::int64_t rows_in_log = 0;            // rows of this device id in this file's log
  std::int64_t bundles_merged = 0;         // its bundles merged here
  std::string last_merged_at;              // "" when none
  std::int64_t last_rows_added = 0;        // rows the last one added
  std::int64_t rows_after_revocation = 0;  // 0 unless revoked: rows recorded after it (merged before it)
};
Result<std::vector<DeviceRecord>> device_records(Database& db);

}  // namespace furrow
