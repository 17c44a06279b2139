#include "storage/enrolment.h"

#include "storage/trial_store.h"

namespace furrow {
namespace {

const char* kColumns =
    "device_id, role, public_key, label, enrolled_by, enrolled_at, revoked_at, revoked_by, revoked_reason, "
    "succeeds_device_id, succeeds_up_to";

Enrolment read_enrolment(const Statement& s) {
  Enrolment e;
  e.device_id = s.text(0);
  e.role = s.text(1);
  e.public_key = s.blob(2);
  e.label = s.text(3);
  e.enrolled_by = s.text(4);
  e.enrolled_at = s.text(5);
  e.revoked_at = s.optional_text(6);
  e.revoked_by = s.optional_text(7);
  e.revoked_reason = s.optional_text(8);
  e.succeeds_device_id = s.text(9);
  e.succeeds_up_to = s.integer(10);
  return e;
}

Result<std::optional<Enrolment>> one_enrolment(Database& db, const std::string& where, const std::string& value,
                                               bool blob) {
  auto s = db.prepare(std::string("SELECT ") + kColumns + " FROM enrolment WHERE " + where + " = ?");
  if (!s) return s.problem();
  if (blob) s->bind_blob(1, value);
  else s->bind(1, value);
  if (s->step()) return std::optional<Enrolment>(read_enrolment(*s));
  if (s->failed()) return make_problem(s->error());
  return std::optional<Enrolment>();
}

}  // namespace

Result<KeyPair> own_key(Database& db) {
  auto s = db.prepare("SELECT public_key, secret_key FROM signing_key");
  if (!s) return s.problem();
  if (!s->step()) return make_problem("this trial file has no signing key");
  KeyPair k{s->blob(0), s->blob(1)};
  if (k.public_key.size() != kPublicKeyBytes || k.secret_key.size() != kSecretKeyBytes)
    return make_problem("this trial file's signing key is damaged");
  return k;
}

Status make_own_key(Database& db, const std::string& device_id, const std::string& role) {
  const KeyPair k = new_key_pair();
  auto s = db.prepare("INSERT INTO signing_key (only_row, public_key, secret_key, made_at) VALUES (1, ?, ?, ?)");
  if (!s) return s.problem();
  s->bind_blob(1, k.public_key).bind_blob(2, k.secret_key).bind(3, utc_now());
  FURROW_TRY(s->run());
  if (role != "station") return ok_status();
  Enrolment self;
  self.device_id = device_id;
  self.role = "station";
  self.public_key = k.public_key;
  self.label = "Station";
  self.enrolled_by = "Furrow";
  self.enrolled_at = utc_now();
  return add_enrolment(db, self);
}

Result<std::vector<Enrolment>> list_enrolments(Database& db) {
  auto s = db.prepare(std::string("SELECT ") + kColumns + " FROM enrolment ORDER BY enrolled_at, device_id");
  if (!s) return s.problem();
  std::vector<Enrolment> out;
  while (s->step()) out.push_back(read_enrolment(*s));
  if (s->failed()) return make_problem(s->error());
  return out;
}

Result<std::optional<Enrolment>> enrolment_by_key(Database& db, const std::string& public_key) {
  return one_enrolment(db, "public_key", public_key, true);
}

Result<std::optional<Enrolment>> enrolment_of(Database& db, const std::string& device_id) {
  return one_enrolment(db, "device_id", device_id, false);
}

Status add_enrolment(Database& db, const Enrolment& e) {
  if (e.public_key.size() != kPublicKeyBytes) return make_problem("not a public key (32 bytes)");
  auto known = enrolment_of(db, e.device_id);
  if (!known) return known.problem();
  if (*known) return make_problem("device " + e.device_id + " is enrolled already");
  auto by_key = enrolment_by_key(db, e.public_key);
  if (!by_key) return by_key.problem();
  if (*by_key) return make_problem("that key is enrolled already, as device " + (*by_key)->device_id);
  auto s = db.prepare(std::string("INSERT INTO enrolment (") + kColumns + ") VALUES (?,?,?,?,?,?,?,?,?,?,?)");
  if (!s) return s.problem();
  s->bind(1, e.device_id).bind(2, e.role).bind_blob(3, e.public_key).bind(4, e.label).bind(5, e.enrolled_by)
      .bind(6, e.enrolled_at).bind(7, e.revoked_at).bind(8, e.revoked_by).bind(9, e.revoked_reason)
      .bind(10, e.succeeds_device_id).bind(11, e.succeeds_up_to);
  return s->run();
}

Status revoke_device(Database& db, const std::string& device_id, const std::string& by, const std::string& reason) {
  if (by.empty()) return make_problem("say who revokes the device");
  auto e = enrolment_of(db, device_id);
  if (!e) return e.problem();
  if (!*e) return make_problem("no device " + device_id + " is enrolled in this trial (see furrow device list)");
  if ((*e)->role == "station") return make_problem("the station's own key cannot be revoked");
  if ((*e)->revoked())
    return make_problem("device " + device_id + " was revoked already, on " + *(*e)->revoked_at + " by " +
                        (*e)->revoked_by.value_or("?"));
  auto s = db.prepare("UPDATE enrolment SET revoked_at = ?, revoked_by = ?, revoked_reason = ? WHERE device_id = ?");
  if (!s) return s.problem();
  s->bind(1, utc_now()).bind(2, by).bind(3, reason).bind(4, device_id);
  return s->run();
}

Result<std::vector<DeviceRecord>> device_records(Database& db) {
  auto enrolled = list_enrolments(db);
  if (!enrolled) return enrolled.problem();
  auto rows = db.prepare("SELECT count(*), coalesce(sum(recorded_at > ?), 0) FROM observation WHERE device_id = ?");
  if (!rows) return rows.problem();
  auto merged = db.prepare("SELECT count(*), coalesce(max(first_merged_at), ''), "
                           "coalesce((SELECT observations_added FROM merged_bundle m2 WHERE m2.maker_device_id = ?1 "
                           "ORDER BY first_merged_at DESC LIMIT 1), 0) FROM merged_bundle WHERE maker_device_id = ?1");
  if (!merged) return merged.problem();
  std::vector<DeviceRecord> out;
  for (const Enrolment& e : *enrolled) {
    DeviceRecord r;
    r.enrolment = e;
    rows->reset();
    rows->bind(1, e.revoked_at.value_or("9999")).bind(2, e.device_id);
    if (rows->step()) {
      r.rows_in_log = rows->integer(0);
      r.rows_after_revocation = rows->integer(1);
    }
    merged->reset();
    merged->bind(1, e.device_id);
    if (merged->step()) {
      r.bundles_merged = merged->integer(0);
      r.last_merged_at = merged->text(1);
      r.last_rows_added = merged->integer(2);
    }
    out.push_back(std::move(r));
  }
  return out;
}

}  // namespace furrow
