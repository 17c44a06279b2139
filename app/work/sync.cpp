#include "app/work/sync.h"

#include <nlohmann/json.hpp>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <set>

#include <fcntl.h>
#include <unistd.h>

#include "platform/net.h"
#include "storage/backup.h"
#include "storage/bundle.h"
#include "storage/enrolment.h"
#include "storage/keys.h"
#include "storage/text_file.h"
#include "storage/trial_store.h"

namespace fs = std::filesystem;
using json = nlohmann::json;

namespace furrow {
namespace {

constexpr int kProtocolVersion = 1;
constexpr size_t kMaxJsonMessage = 4u * 1024 * 1024;

std::string sync_folder(const std::string& data) { return (fs::path(data) / "sync").string(); }

Status send_json(SecureChannel& ch, const json& j) { return ch.send(j.dump()); }

// The next message as JSON of the given type ("refused" from the other side
// becomes its Problem).
Result<json> receive_json(SecureChannel& ch, const char* type, size_t max_bytes = kMaxJsonMessage) {
  auto m = ch.receive(max_bytes);
  if (!m) return m.problem();
  if (m->size() > kMaxJsonMessage) return make_problem("a message too large for its kind");
  json j = json::parse(*m, nullptr, false);
  if (j.is_discarded() || !j.is_object() || !j.contains("type") || !j["type"].is_string())
    return make_problem("a message that is not Furrow's sync");
  if (j["type"] == "refused") return make_problem(j.value("reason", std::string("refused")));
  if (j["type"] != type) return make_problem(std::string("expected '") + type + "', got '" + j["type"].get<std::string>() + "'");
  return j;
}

std::string text_of(const json& j, const char* key) {
  const auto it = j.find(key);
  return it != j.end() && it->is_string() ? it->get<std::string>() : std::string();
}

bool bool_of(const json& j, const char* key) {
  const auto it = j.find(key);
  return it != j.end() && it->is_boolean() && it->get<bool>();
}

std::int64_t int_of(const json& j, const char* key) {
  const auto it = j.find(key);
  return it != j.end() && it->is_number_integer() ? it->get<std::int64_t>() : 0;
}

const json& object_of(const json& j, const char* key) {
  static const json empty = json::object();
  const auto it = j.find(key);
  return it != j.end() && it->is_object() ? *it : empty;
}

std::map<std::string, std::int64_t> holds_of(const json& j) {
  std::map<std::string, std::int64_t> out;
  if (!j.is_object()) return out;
  for (const auto& [k, v] : j.items())
    if (v.is_number_integer() && k.size() <= 64) out[k] = v.get<std::int64_t>();
  return out;
}

json holds_json(const std::map<std::string, std::int64_t>& h) {
  json j = json::object();
  for (const auto& [k, v] : h) j[k] = v;
  return j;
}


// A bundle's bytes as a file in the sync folder's spool (merge_bundle reads files).
struct SpoolFile {
  std::string path;
  explicit SpoolFile(const std::string& folder) {
    std::error_code ec;
    fs::create_directories(folder, ec);
    path = (fs::path(folder) / (to_hex(random_bytes(12)) + ".bundle")).string();
  }
  ~SpoolFile() {
    std::error_code ec;
    fs::remove(path, ec);
  }
};

// The merge's words without the spool file's name.
std::string without_path(const std::string& message, const std::string& path) {
  std::string m = message;
  for (size_t at; (at = m.find(path + ": ")) != std::string::npos;) m.erase(at, path.size() + 2);
  for (size_t at; (at = m.find(path)) != std::string::npos;) m.replace(at, path.size(), "the bundle");
  return m;
}

Result<MergeOutcome> merge_bytes(Database& db, const StoredTrial& trial, const std::string& bytes,
                                 const std::string& spool) {
  SpoolFile f(spool);
  if (auto w = write_text_file(f.path, bytes); !w) return w.problem();
  auto merged = merge_bundle(db, trial, f.path);
  if (!merged) return make_problem(without_path(merged.problem().message, f.path));
  return merged;
}

std::int64_t count_rows_of(Database& db, const std::string& device_id) {
  auto s = db.prepare("SELECT count(*) FROM observation WHERE device_id = ?");
  if (!s) return 0;
  s->bind(1, device_id);
  return s->step() ? s->integer(0) : 0;
}

// Whether this device's own rows differ from what the station holds of it
// (`own`: {n, digest}): words for the crew, or empty when they agree.
std::string own_rows_clash(Database& db, const std::string& device_id, const json& own) {
  const std::int64_t n = int_of(own, "n");
  if (n <= 0) return {};
  const std::int64_t mine = count_rows_of(db, device_id);
  auto digest = rows_digest(db, device_id, n);
  if (mine < n)
    return "this tablet's file holds fewer of its own values (" + std::to_string(mine) + ") than the station has from it (" +
           std::to_string(n) + "): it was restored from an older copy or backup. Nothing was sent, so that no "
           "value is lost; the station manager gives this file a new identity (furrow device renew), then sync again";
  if (!digest || *digest != text_of(own, "digest"))
    return "the station holds values from this tablet that this file does not hold alike: another copy of this "
           "tablet's file has synced. Nothing was sent, so that no value is lost; the station manager gives this copy "
           "a new identity (furrow device renew), then sync again";
  return {};
}

// Served station trials in a folder: uid -> path.
std::map<std::string, std::string> station_trials(const std::string& folder) {
  std::map<std::string, std::string> out;
  std::error_code ec;
  for (const auto& e : fs::directory_iterator(folder, ec)) {
    if (e.path().extension() != ".furrow" || !e.is_regular_file(ec)) continue;
    auto open = open_trial_database(e.path().string(), Access::read_only);
    if (open && open->trial.role == "station") out[open->trial.uid] = e.path().string();
  }
  return out;
}

}  // namespace

// --- The station ---------------------------------------------------------

SyncStation::SyncStation(StationConfig config) : config_(std::move(config)) {
  if (config_.pairing_code.empty()) {
    char b[12];
    std::snprintf(b, sizeof b, "%08u", random_below(100000000));
    config_.pairing_code = b;
  }
}

void SyncStation::log_refusal(const std::string& peer, const std::string& why) {
  log({"", peer, "refused", "", "", "", "", 0, 0, why});
}

void SyncStation::log(const SyncLogEntry& e) {
  json j = {{"at", e.at.empty() ? utc_now() : e.at}, {"peer", e.peer}, {"event", e.event}};
  if (!e.trial_uid.empty()) j["trial_uid"] = e.trial_uid;
  if (!e.trial_name.empty()) j["trial"] = e.trial_name;
  if (!e.device_id.empty()) j["device_id"] = e.device_id;
  if (!e.device_label.empty()) j["device"] = e.device_label;
  if (e.received || e.sent || e.event == "synced") {
    j["received"] = e.received;
    j["sent"] = e.sent;
  }
  if (!e.detail.empty()) j["detail"] = e.detail;
  const std::string line = j.dump() + "\n";
  std::lock_guard<std::mutex> lock(log_mutex_);
  std::error_code ec;
  fs::create_directories(sync_folder(config_.data_folder), ec);
  const std::string path = (fs::path(sync_folder(config_.data_folder)) / "log.jsonl").string();
  const int fd = ::open(path.c_str(), O_RDWR | O_CREAT | O_APPEND | O_CLOEXEC, 0644);
  if (fd < 0) return;
  // A line cut short before (a crash mid-write) is ended, so this one stays whole.
  std::string out = line;
  const off_t size = ::lseek(fd, 0, SEEK_END);
  char last = '\n';
  if (size > 0 && ::pread(fd, &last, 1, size - 1) == 1 && last != '\n') out.insert(0, "\n");
  ssize_t written = ::write(fd, out.data(), out.size());
  (void)written;
  ::fsync(fd);
  ::close(fd);
}

std::string code_for_people(const std::string& code) {
  if (code.size() != 8 || code.find_first_not_of("0123456789") != std::string::npos) return code;
  return code.substr(0, 4) + " " + code.substr(4);
}

std::vector<SyncLogEntry> read_sync_log(const std::string& data_folder) {
  std::vector<SyncLogEntry> out;
  std::ifstream in(fs::path(sync_folder(data_folder)) / "log.jsonl");
  for (std::string line; std::getline(in, line);) {
    json j = json::parse(line, nullptr, false);
    if (j.is_discarded() || !j.is_object()) continue;
    SyncLogEntry e;
    e.at = text_of(j, "at");
    e.peer = text_of(j, "peer");
    e.event = text_of(j, "event");
    e.trial_uid = text_of(j, "trial_uid");
    e.trial_name = text_of(j, "trial");
    e.device_id = text_of(j, "device_id");
    e.device_label = text_of(j, "device");
    e.detail = text_of(j, "detail");
    if (j.contains("received") && j["received"].is_number_integer()) e.received = j["received"].get<std::int64_t>();
    if (j.contains("sent") && j["sent"].is_number_integer()) e.sent = j["sent"].get<std::int64_t>();
    out.push_back(std::move(e));
  }
  return out;
}

bool SyncStation::check_token(const std::string& token) {
  if (token.empty() || token.size() > 128) return false;
  const std::string hashed = hash_hex(token);
  std::lock_guard<std::mutex> lock(pairing_mutex_);
  const std::string path = (fs::path(sync_folder(config_.data_folder)) / "paired.json").string();
  std::error_code ec;
  if (!fs::is_regular_file(path, ec)) return false;
  std::ifstream in(path);
  json j = json::parse(in, nullptr, false);
  if (j.is_discarded() || !j.is_object() || !j.contains("devices") || !j["devices"].is_array()) {
    pairing_damaged_ = true;
    return false;
  }
  for (const auto& d : j["devices"])
    if (d.is_object() && text_of(d, "token_hash") == hashed) return true;
  return false;
}

std::string SyncStation::pair_new(const std::string& peer) {
  const std::string token = to_hex(random_bytes(32));
  std::lock_guard<std::mutex> lock(pairing_mutex_);
  const std::string path = (fs::path(sync_folder(config_.data_folder)) / "paired.json").string();
  json j;
  std::error_code ec;
  if (fs::exists(path, ec) && !fs::is_regular_file(path, ec)) return {};
  {
    std::ifstream in(path);
    j = json::parse(in, nullptr, false);
  }
  if (fs::exists(path, ec) && (j.is_discarded() || !j.is_object())) {
    // A damaged pairing file is kept aside, not overwritten: the manager may mend it.
    fs::rename(path, path + ".damaged-" + utc_now(), ec);
  }
  if (j.is_discarded() || !j.is_object()) j = json::object();
  if (!j.contains("devices") || !j["devices"].is_array()) j["devices"] = json::array();
  j["devices"].push_back({{"token_hash", hash_hex(token)}, {"paired_at", utc_now()}, {"peer", peer}});
  fs::create_directories(sync_folder(config_.data_folder), ec);
  if (!write_text_file(path, j.dump(2) + "\n")) return {};
  return token;
}

void SyncStation::backups_due(const std::string& trial_path) {
  if (config_.backup_folder.empty()) return;
  std::lock_guard<std::mutex> lock(backup_mutex_);
  const std::string day = utc_now().substr(0, 10);
  std::vector<std::string> paths;
  if (!trial_path.empty()) paths.push_back(trial_path);
  for (const auto& [uid, path] : station_trials(config_.data_folder))
    if (last_backup_day_[path] != day && path != trial_path) paths.push_back(path);
  for (const std::string& path : paths) {
    auto b = backup_trial(path, config_.backup_folder, config_.keep_backups);
    SyncLogEntry e;
    e.event = b ? "backup" : "failed";
    e.detail = b ? b->path + " (" + std::to_string(b->log_rows) + " rows, integrity checked)" : "backup of " + path +
                                                                                                  ": " + b.problem().message;
    log(e);
    if (b) last_backup_day_[path] = day;
  }
}

void SyncStation::serve(ByteStream& stream, const std::string& peer) {
  // Whatever a peer sends, a session ends in words in the log, never by
  // taking the station down.
  try {
    serve_session(stream, peer);
  } catch (const std::exception& e) {
    log({"", peer, "refused", "", "", "", "", 0, 0, std::string("a message the station could not read (") + e.what() + ")"});
  }
}

void SyncStation::serve_session(ByteStream& stream, const std::string& peer) {
  ++active_;
  struct Done {
    std::atomic<int>& n;
    ~Done() { --n; }
  } done{active_};
  auto refuse_session = [&](const std::string& why) {
    log({"", peer, "refused", "", "", "", "", 0, 0, why});
  };
  // Until the device has proved itself, the whole exchange has a time limit:
  // a connection that trickles bytes cannot hold a session for ever.
  stream.set_deadline(kHandshakeSeconds);
  auto channel = SecureChannel::as_server(stream);
  if (!channel) return refuse_session("no secure connection: " + channel.problem().message);
  SecureChannel& ch = *channel;
  const std::string& session_hash = ch.session_hash();

  // hello: the device's trials.
  auto hello = receive_json(ch, "hello", kMaxHandshakeMessage);
  if (!hello) return refuse_session(hello.problem().message);
  if (!(*hello).contains("version") || (*hello)["version"] != kProtocolVersion) {
    send_json(ch, {{"type", "refused"}, {"reason", "this station speaks sync version " + std::to_string(kProtocolVersion) +
                                                       "; update Furrow on the device"}});
    return refuse_session("a device of another sync version");
  }
  const auto served = station_trials(config_.data_folder);
  struct Asked {
    std::string uid, device_id, path;
  };
  std::vector<Asked> asked;
  json proofs = json::array();
  if ((*hello)["trials"].is_array())
    for (const auto& t : (*hello)["trials"]) {
      if (asked.size() >= 256) break;
      const std::string uid = text_of(t, "uid"), device_id = text_of(t, "device_id");
      const auto it = served.find(uid);
      if (it == served.end()) continue;
      auto open = open_trial_database(it->second, Access::read_only);
      if (!open) continue;
      auto key = own_key(open->db);
      if (!key) continue;
      proofs.push_back({{"uid", uid}, {"sig", to_hex(sign_parts(key->secret_key, {session_hash, "station", uid}))}});
      asked.push_back({uid, device_id, it->second});
    }
  if (auto s = send_json(ch, {{"type", "station"}, {"trials", proofs}}); !s) return refuse_session(s.problem().message);

  // auth: pairing and each trial's proof.
  auto auth = receive_json(ch, "auth", kMaxHandshakeMessage);
  if (!auth) return refuse_session(auth.problem().message);
  const std::string token = text_of(*auth, "token");
  const std::string code = text_of(*auth, "code");
  const bool token_ok = check_token(token);
  if (pairing_damaged_.exchange(false))
    log({"", peer, "failed", "", "", "", "", 0, 0,
         "the station's pairing file (sync/paired.json) cannot be read: paired devices are asked for the code again"});
  if (!token_ok) {
    bool closed = false, right = false;
    // Wrong codes are counted per network address: guessing from one machine
    // closes pairing for that machine only.
    const std::string address = peer.substr(0, peer.rfind(':'));
    {
      std::lock_guard<std::mutex> lock(pairing_mutex_);
      int& wrong = wrong_codes_[address];
      closed = wrong >= config_.max_wrong_codes;
      std::string typed;
      for (char c : code)
        if (c != ' ' && c != '-') typed += c;
      right = !closed && !typed.empty() && typed == config_.pairing_code;
      if (!closed && !right && !code.empty()) ++wrong;
    }
    if (!right && !code.empty()) {
      // A wrong code costs the guesser two seconds (with at most 32 sessions
      // and 4 an address, 10^8 codes take years).
      std::this_thread::sleep_for(std::chrono::seconds(2));
    }
    if (!right) {
      const std::string why = closed ? "pairing is closed for this device's address after too many wrong codes; "
                                       "restart the station to pair"
                              : code.empty() ? "this device has not paired with this station: give the pairing code"
                                             : "wrong pairing code";
      send_json(ch, {{"type", "refused"}, {"reason", why}});
      return refuse_session(why);
    }
  }
  std::map<std::string, std::string> proof_of;
  if ((*auth)["trials"].is_array())
    for (const auto& t : (*auth)["trials"]) proof_of[text_of(t, "uid")] = text_of(t, "sig");

  struct Session {
    OpenTrial open;
    std::string device_id, label, public_key;
    std::int64_t received = 0, sent = 0;
    std::string declined;   // why the device sent nothing for this trial
  };
  std::map<std::string, Session> sessions;
  json verdicts = json::array();
  for (const Asked& a : asked) {
    json v = {{"uid", a.uid}, {"accepted", false}};
    SyncLogEntry e{"", peer, "refused", a.uid, "", a.device_id, "", 0, 0, ""};
    auto open = open_trial_database(a.path);
    if (!open) {
      v["reason"] = "the station cannot open this trial now";
      e.detail = open.problem().message;
    } else {
      e.trial_name = open->trial.plan.name;
      auto who = enrolment_of(open->db, a.device_id);
      const auto sig = from_hex(proof_of[a.uid]);
      if (!who || !*who || (*who)->role != "device") {
        v["reason"] = "this device (" + a.device_id + ") is not enrolled for this trial at the station";
      } else if ((*who)->revoked()) {
        e.device_label = (*who)->label;
        v["reason"] = "this device (" + (*who)->label + ") was revoked at the station on " + *(*who)->revoked_at;
      } else if (!sig || !verify_parts((*who)->public_key, *sig, {session_hash, "device", a.uid, a.device_id})) {
        e.device_label = (*who)->label;
        v["reason"] = "this device's proof of identity does not match its enrolled key";
      } else {
        v["accepted"] = true;
        auto held = held_without_gap(open->db);
        v["holds"] = held ? holds_json(*held) : json::object();
        // What the station holds of this device, as a digest the device checks
        // against its own rows: a copied or restored tablet file is found here.
        const std::int64_t own = held && held->count(a.device_id) ? held->at(a.device_id) : 0;
        auto digest = rows_digest(open->db, a.device_id, own);
        v["own"] = {{"n", own}, {"digest", digest ? *digest : std::string()}};
        sessions.emplace(a.uid, Session{std::move(*open), a.device_id, (*who)->label, (*who)->public_key, 0, 0, {}});
      }
    }
    if (!v["accepted"].get<bool>()) {
      e.detail = v["reason"].get<std::string>() + (e.detail.empty() ? "" : " (" + e.detail + ")");
      log(e);
    }
    verdicts.push_back(v);
  }
  json welcome = {{"type", "welcome"}, {"trials", verdicts}};
  if (sessions.empty()) stream.set_deadline(kHandshakeSeconds);   // nothing to exchange: the limit stays
  else stream.set_deadline(0);
  // A device is paired (given its token) once the code was right and at
  // least one of its trials accepted it.
  if (!token_ok && !sessions.empty()) {
    const std::string new_token = pair_new(peer);
    if (new_token.empty()) {
      send_json(ch, {{"type", "refused"}, {"reason", "the station cannot save the pairing (its disk?)"}});
      return refuse_session("cannot save a pairing");
    }
    std::string who;
    for (const auto& [uid, s] : sessions) who += (who.empty() ? "" : ", ") + s.label + " (" + s.device_id + ")";
    log({"", peer, "paired", "", "", "", "", 0, 0, "with the pairing code: " + who});
    welcome["token"] = new_token;
  }
  if (auto s = send_json(ch, welcome); !s) return refuse_session(s.problem().message);

  // The exchange: bundles both ways until bye.
  const std::string spool = (fs::path(sync_folder(config_.data_folder)) / "spool").string();
  std::string failure;
  bool said_bye = false;
  for (;;) {
    auto m = ch.receive();
    if (!m) {
      failure = m.problem().message;
      break;
    }
    json j = json::parse(*m, nullptr, false);
    const std::string type = j.is_object() ? text_of(j, "type") : "";
    if (type == "bye") {
      said_bye = true;   // answered once the session is in the log
      break;
    }
    if (type.empty()) {
      failure = "a message that is not Furrow's sync";
      send_json(ch, {{"type", "refused"}, {"reason", failure}});
      break;
    }
    const auto it = sessions.find(j.is_object() ? text_of(j, "uid") : "");
    if (it == sessions.end()) {
      failure = "a message about a trial not accepted in this session";
      send_json(ch, {{"type", "refused"}, {"reason", failure}});
      break;
    }
    Session& s = it->second;
    if (type == "decline") {
      // The device found its own rows differ from the station's (a copied or
      // restored tablet file) and sends nothing for this trial.
      s.declined = text_of(j, "reason").substr(0, 500);
      continue;
    }
    if (type == "bundle") {
      auto bytes = ch.receive();
      if (!bytes) {
        failure = bytes.problem().message;
        break;
      }
      // A bundle signed by another device than the one that proved itself is
      // refused before it is opened (its signer's key is bytes 16-47).
      if (bytes->size() < 120 || bytes->compare(0, 16, "FURROW BUNDLE 3\n") != 0) {
        failure = "a message that is not a bundle where a bundle was due";
        send_json(ch, {{"type", "refused"}, {"reason", failure}});
        break;
      }
      if (bytes->compare(16, 32, s.public_key) != 0) {
        failure = "a bundle signed by another device than the one that proved itself in this session";
        send_json(ch, {{"type", "refused"}, {"reason", failure}});
        break;
      }
      // One merge at a time per trial in this station: writers queue here
      // instead of polling SQLite's lock.
      std::mutex* trial_lock = nullptr;
      {
        std::lock_guard<std::mutex> lock(merge_locks_mutex_);
        auto& slot = merge_locks_[it->first];
        if (!slot) slot = std::make_unique<std::mutex>();
        trial_lock = slot.get();
      }
      Result<MergeOutcome> merged = make_problem("not merged");
      {
        std::lock_guard<std::mutex> lock(*trial_lock);
        merged = merge_bytes(s.open.db, s.open.trial, *bytes, spool);
      }
      if (merged && merged->manifest.maker_device_id != s.device_id)
        merged = make_problem("a bundle made by another device than the one that proved itself");
      if (!merged) {
        failure = merged.problem().message;
        send_json(ch, {{"type", "refused"}, {"reason", failure}});
        break;
      }
      s.received += merged->observations_added;
      // What the station now holds of this device (its rows are kept with no gap, R5).
      json holds = json::object();
      if (auto q = s.open.db.prepare("SELECT max(sequence), count(*) FROM observation WHERE device_id = ?")) {
        q->bind(1, s.device_id);
        if (q->step() && q->integer(0) == q->integer(1)) holds[s.device_id] = q->integer(0);
      }
      send_json(ch, {{"type", "merged"}, {"added", merged->observations_added}, {"holds", holds}});
    } else if (type == "want") {
      BundleSelection sel;
      sel.receiver_holds = holds_of(object_of(j, "holds"));
      sel.makers_rows_only = !bool_of(j, "others");
      // The station's own rows the device holds must be the station's still
      // (a station file restored from an older backup has lost some).
      const json& mine = object_of(j, "station_rows");
      const std::int64_t n = int_of(mine, "n");
      if (n > 0) {
        auto here = rows_digest(s.open.db, s.open.trial.device_id, n);
        if (!here || *here != text_of(mine, "digest")) {
          failure = "this device holds settlements the station's file no longer holds alike (was the station's "
                    "trial restored from an older backup?); nothing more is exchanged for this trial: the station "
                    "manager must look at it";
          send_json(ch, {{"type", "refused"}, {"reason", failure}});
          break;
        }
      }
      sel.max_rows = kSyncChunkRows;
      auto b = bundle_for_sync(s.open.db, s.open.trial, sel);
      if (!b) {
        failure = b.problem().message;
        send_json(ch, {{"type", "refused"}, {"reason", "the station cannot make its bundle: " + failure}});
        break;
      }
      if (b->first.observations == 0) {
        send_json(ch, {{"type", "none"}, {"uid", it->first}});
        continue;
      }
      if (!send_json(ch, {{"type", "bundle"}, {"uid", it->first}, {"rows", b->first.observations}}) ||
          !ch.send(b->second)) {
        failure = "the connection was cut while sending";
        break;
      }
      s.sent += b->first.observations;
    } else {
      failure = "an unexpected message '" + type + "'";
      send_json(ch, {{"type", "refused"}, {"reason", failure}});
      break;
    }
  }
  for (auto& [uid, s] : sessions) {
    SyncLogEntry e{"", peer, !s.declined.empty() ? "refused" : failure.empty() ? "synced" : "failed", uid,
                   s.open.trial.plan.name, s.device_id, s.label, s.received, s.sent,
                   !s.declined.empty() ? "the device's file differs from what the station holds of it: " + s.declined
                                       : failure};
    log(e);
  }
  // The device hears the end only after the session is in the log (so what
  // `device today` shows never lags what the device was told).
  if (said_bye) send_json(ch, {{"type", "bye"}});
  // A backup of each trial that took rows (at least after each sync).
  for (auto& [uid, s] : sessions)
    if (s.received > 0) backups_due(served.at(uid));
}

Result<std::vector<DeviceDay>> station_day(const std::string& data_folder, const std::string& day) {
  std::vector<DeviceDay> out;
  const auto log = read_sync_log(data_folder);
  for (const auto& [uid, path] : station_trials(data_folder)) {
    auto open = open_trial_database(path, Access::read_only);
    if (!open) return make_problem(path + ": " + open.problem().message);
    auto records = device_records(open->db);
    if (!records) return make_problem(path + ": " + records.problem().message);
    for (const DeviceRecord& r : *records) {
      if (r.enrolment.role != "device") continue;
      DeviceDay d;
      d.trial_name = open->trial.plan.name;
      d.trial_uid = uid;
      d.device_id = r.enrolment.device_id;
      d.label = r.enrolment.label;
      d.revoked = r.enrolment.revoked();
      d.rows_in_log = r.rows_in_log;
      for (const SyncLogEntry& e : log)
        if (e.event == "synced" && e.trial_uid == uid && e.device_id == d.device_id) {
          d.last_sync = e.at;
          if (e.at.rfind(day, 0) == 0) d.synced_today = true;
        }
      auto s = open->db.prepare("SELECT coalesce(sum(observations_added), 0) FROM merged_bundle WHERE maker_device_id = ? "
                                "AND first_merged_at LIKE ?");
      if (s) {
        s->bind(1, d.device_id).bind(2, day + "%");
        if (s->step()) d.rows_today = s->integer(0);
      }
      out.push_back(d);
    }
  }
  return out;
}

// --- The device ----------------------------------------------------------

Result<std::optional<StationPairing>> load_pairing(const std::string& data_folder) {
  const fs::path path = fs::path(data_folder) / "station.json";
  std::error_code ec;
  if (!fs::exists(path, ec)) return std::optional<StationPairing>();
  std::ifstream in(path);
  json j = json::parse(in, nullptr, false);
  if (j.is_discarded() || !j.is_object() || !j.contains("port") || !j["port"].is_number_integer())
    return make_problem(path.string() + ": not a pairing Furrow wrote; pair again");
  StationPairing p;
  p.host = text_of(j, "host");
  p.port = j["port"].get<int>();
  p.token = text_of(j, "token");
  p.paired_at = text_of(j, "paired_at");
  return std::optional<StationPairing>(p);
}

Status save_pairing(const std::string& data_folder, const StationPairing& p) {
  const json j = {{"host", p.host}, {"port", p.port}, {"token", p.token}, {"paired_at", p.paired_at}};
  return write_text_file((fs::path(data_folder) / "station.json").string(), j.dump(2) + "\n");
}

std::vector<std::string> device_trial_files(const std::string& folder) {
  std::vector<std::string> out;
  std::error_code ec;
  for (const auto& e : fs::directory_iterator(folder, ec)) {
    if (e.path().extension() != ".furrow" || !e.is_regular_file(ec)) continue;
    auto open = open_trial_database(e.path().string(), Access::read_only);
    if (open && open->trial.role == "device") out.push_back(e.path().string());
  }
  std::sort(out.begin(), out.end());
  return out;
}

Result<SyncResult> sync_device_session(ByteStream& stream, const SyncRequest& request, SyncProgress* progress);

std::string SyncResult::summary() const {
  std::int64_t sent = 0, received = 0, settlements = 0;
  int refused = 0;
  for (const auto& t : trials) {
    sent += t.sent;
    received += t.received;
    settlements += t.settlements;
    refused += t.accepted ? 0 : 1;
  }
  auto plural = [](std::int64_t n, const char* one, const char* many) {
    return std::to_string(n) + " " + (n == 1 ? one : many);
  };
  std::string s = "sent " + plural(sent, "value", "values") + ", received " +
                  plural(settlements, "settlement", "settlements");
  if (received > settlements) s += " and " + plural(received - settlements, "value of other devices", "values of other devices");
  if (refused) s += "; " + plural(refused, "trial", "trials") + " refused";
  return s;
}

Result<SyncResult> sync_as_device(ByteStream& stream, const SyncRequest& request, SyncProgress* progress) {
  try {
    return sync_device_session(stream, request, progress);
  } catch (const std::exception& e) {
    return make_problem(std::string("the station sent a message this device could not read (") + e.what() + ")");
  }
}

Result<SyncResult> sync_device_session(ByteStream& stream, const SyncRequest& request, SyncProgress* progress) {
  struct Local {
    std::string path;
    OpenTrial open;
    KeyPair key;
    std::string station_key, station_id;
  };
  std::vector<Local> locals;
  SyncResult result;
  for (const std::string& path : request.trial_paths) {
    auto open = open_trial_database(path);
    if (!open) return make_problem(path + ": " + open.problem().message);
    if (open->trial.role != "device")
      return make_problem(path + ": this is a station's trial file; a device syncs its own copies (furrow trial copy)");
    auto key = own_key(open->db);
    if (!key) return make_problem(path + ": " + key.problem().message);
    auto enrolled = list_enrolments(open->db);
    if (!enrolled) return make_problem(path + ": " + enrolled.problem().message);
    std::string station_key, station_id;
    for (const Enrolment& e : *enrolled)
      if (e.role == "station") station_key = e.public_key, station_id = e.device_id;
    if (station_key.empty())
      return make_problem(path + ": this copy holds no station key (made before keys): the station enrols it first "
                                 "(furrow device enrol)");
    locals.push_back({path, std::move(*open), *key, station_key, station_id});
  }
  if (locals.empty()) return make_problem("no trial of this device to sync");
  if (progress) progress->trials = static_cast<int>(locals.size());

  auto channel = SecureChannel::as_client(stream);
  if (!channel) return channel.problem();
  SecureChannel& ch = *channel;
  const std::string& session_hash = ch.session_hash();
  json trials = json::array();
  for (const Local& l : locals) trials.push_back({{"uid", l.open.trial.uid}, {"device_id", l.open.trial.device_id}});
  FURROW_TRY(send_json(ch, {{"type", "hello"}, {"version", kProtocolVersion}, {"trials", trials}}));
  auto station = receive_json(ch, "station");
  if (!station) return make_problem("the station refused: " + station.problem().message);
  std::set<std::string> proven;
  if ((*station)["trials"].is_array())
    for (const auto& t : (*station)["trials"]) {
      const std::string uid = text_of(t, "uid");
      const auto sig = from_hex(text_of(t, "sig"));
      for (const Local& l : locals)
        if (l.open.trial.uid == uid) {
          if (!sig || !verify_parts(l.station_key, *sig, {session_hash, "station", uid}))
            return make_problem("the station at this address could not prove it holds the station key of '" +
                                l.open.trial.plan.name +
                                "': it is not this trial's station (or someone is in between); nothing was sent");
          proven.insert(uid);
        }
    }
  if (proven.empty())
    return make_problem("the station at this address holds none of this device's trials, or could not prove it is "
                        "their station; nothing was sent (not the pairing code either)");
  json proofs = json::array();
  for (const Local& l : locals)
    if (proven.count(l.open.trial.uid))
      proofs.push_back({{"uid", l.open.trial.uid},
                        {"device_id", l.open.trial.device_id},
                        {"sig", to_hex(sign_parts(l.key.secret_key,
                                                  {session_hash, "device", l.open.trial.uid, l.open.trial.device_id}))}});
  json auth = {{"type", "auth"}, {"trials", proofs}};
  if (!request.token.empty()) auth["token"] = request.token;
  if (!request.code.empty()) auth["code"] = request.code;
  FURROW_TRY(send_json(ch, auth));
  auto welcome = receive_json(ch, "welcome");
  if (!welcome) return make_problem("the station refused: " + welcome.problem().message);
  result.token = text_of(*welcome, "token").empty() ? request.token : text_of(*welcome, "token");
  if (!text_of(*welcome, "token").empty() && request.on_paired) request.on_paired(result.token);

  std::map<std::string, json> verdict;
  if ((*welcome)["trials"].is_array())
    for (const auto& v : (*welcome)["trials"]) verdict[text_of(v, "uid")] = v;
  const std::string spool = (fs::path(locals.front().path).parent_path() / "sync" / "spool").string();
  // What is known to move: this device's rows the station lacks.
  std::int64_t total = 0;
  for (Local& l : locals) {
    const auto v = verdict.find(l.open.trial.uid);
    if (v == verdict.end() || !bool_of(v->second, "accepted")) continue;
    const auto station_holds = holds_of(object_of(v->second, "holds"));
    const auto own = station_holds.find(l.open.trial.device_id);
    total += std::max<std::int64_t>(0, count_rows_of(l.open.db, l.open.trial.device_id) -
                                           (own == station_holds.end() ? 0 : own->second));
  }
  if (progress) progress->total = total;

  for (size_t i = 0; i < locals.size(); ++i) {
    Local& l = locals[i];
    if (progress) progress->trial = static_cast<int>(i + 1);
    SyncTrialResult r;
    r.path = l.path;
    r.name = l.open.trial.plan.name;
    const auto v = verdict.find(l.open.trial.uid);
    if (!proven.count(l.open.trial.uid)) {
      r.refusal = "the station does not serve this trial";
    } else if (v == verdict.end() || !bool_of(v->second, "accepted")) {
      r.refusal = v == verdict.end() ? "the station did not answer for this trial" : text_of(v->second, "reason");
    } else if (const std::string clash = own_rows_clash(l.open.db, l.open.trial.device_id, object_of(v->second, "own"));
               !clash.empty()) {
      r.refusal = clash;
      FURROW_TRY(send_json(ch, {{"type", "decline"}, {"uid", l.open.trial.uid}, {"reason", clash}}));
    } else {
      r.accepted = true;
      auto holds = holds_of(object_of(v->second, "holds"));
      FURROW_TRY(learn_station_holdings(l.open.db, holds));
      // Up: this device's rows the station lacks, a chunk at a time.
      for (;;) {
        BundleSelection sel;
        sel.receiver_holds = holds;
        sel.makers_rows_only = true;
        sel.max_rows = kSyncChunkRows;
        auto b = bundle_for_sync(l.open.db, l.open.trial, sel);
        if (!b) return make_problem(l.path + ": " + b.problem().message);
        if (b->first.observations == 0) break;
        FURROW_TRY(send_json(ch, {{"type", "bundle"}, {"uid", l.open.trial.uid}, {"rows", b->first.observations}}));
        FURROW_TRY(ch.send(b->second));
        auto merged = receive_json(ch, "merged");
        if (!merged) return make_problem("a bundle of '" + r.name + "' was not merged: " + merged.problem().message);
        const auto added = int_of(*merged, "added");
        auto now_holds = holds_of(object_of(*merged, "holds"));
        const auto before = holds.count(l.open.trial.device_id) ? holds[l.open.trial.device_id] : 0;
        const auto after = now_holds.count(l.open.trial.device_id) ? now_holds[l.open.trial.device_id] : 0;
        r.sent += added;
        if (progress) progress->done += std::max<std::int64_t>(0, after - before);
        for (const auto& [dev, n] : now_holds) holds[dev] = std::max(holds[dev], n);
        FURROW_TRY(learn_station_holdings(l.open.db, now_holds));
        if (after <= before) return make_problem("the station merged nothing of a bundle of '" + r.name + "'; stopped");
      }
      // Down: what the station has for this device.
      const std::int64_t settlements_before = count_rows_of(l.open.db, l.station_id);
      for (;;) {
        auto mine = held_without_gap(l.open.db);
        if (!mine) return make_problem(l.path + ": " + mine.problem().message);
        const std::int64_t station_n = mine->count(l.station_id) ? mine->at(l.station_id) : 0;
        auto station_digest = rows_digest(l.open.db, l.station_id, station_n);
        if (!station_digest) return make_problem(l.path + ": " + station_digest.problem().message);
        FURROW_TRY(send_json(ch, {{"type", "want"}, {"uid", l.open.trial.uid}, {"holds", holds_json(*mine)},
                                  {"others", request.others},
                                  {"station_rows", {{"n", station_n}, {"digest", *station_digest}}}}));
        auto m = ch.receive();
        if (!m) return m.problem();
        json j = json::parse(*m, nullptr, false);
        const std::string type = j.is_object() ? text_of(j, "type") : "";
        if (type == "none") break;
        if (type == "refused") return make_problem("the station refused: " + text_of(j, "reason"));
        if (type != "bundle") return make_problem("an unexpected message from the station");
        auto bytes = ch.receive();
        if (!bytes) return bytes.problem();
        auto merged = merge_bytes(l.open.db, l.open.trial, *bytes, spool);
        if (!merged) return make_problem("a bundle from the station for '" + r.name + "' was refused: " + merged.problem().message);
        r.received += merged->observations_added;
        if (merged->observations_added == 0) break;   // nothing new: stop rather than ask again
      }
      r.settlements = count_rows_of(l.open.db, l.station_id) - settlements_before;
    }
    result.trials.push_back(r);
  }
  FURROW_TRY(send_json(ch, {{"type", "bye"}}));
  auto bye = receive_json(ch, "bye");
  if (!bye) return bye.problem();
  return result;
}

// --- Network glue ----------------------------------------------------------

namespace {
// A TCP stream as the channel's byte stream.
class TcpBytes : public ByteStream {
 public:
  TcpBytes(TcpStream s, int timeout_ms) : s_(std::move(s)) { s_.set_timeout(timeout_ms); }
  Status write_all(std::string_view b) override { return s_.write_all(b); }
  Result<std::string> read_exact(size_t n) override { return s_.read_exact(n); }
  void set_deadline(int seconds) override { s_.set_deadline_ms(seconds > 0 ? steady_now_ms() + seconds * 1000LL : 0); }
  const std::string& peer() const { return s_.peer(); }

 private:
  TcpStream s_;
};
}  // namespace

Result<std::unique_ptr<SyncServer>> SyncServer::start(StationConfig config, const std::string& listen_address, int port,
                                                      int timeout_s) {
  auto listener = TcpListener::listen(listen_address, port);
  if (!listener) return listener.problem();
  std::unique_ptr<SyncServer> server(new SyncServer());
  server->station_ = std::make_unique<SyncStation>(std::move(config));
  server->port_ = listener->port();
  server->thread_ = std::thread([s = server.get(), l = std::make_shared<TcpListener>(std::move(*listener)), timeout_s]() {
    struct Worker {
      std::thread thread;
      std::shared_ptr<std::atomic<bool>> finished;
      std::string address;
    };
    std::vector<Worker> workers;
    std::time_t last_check = 0;
    while (!s->stop_.load()) {
      if (std::time(nullptr) - last_check >= 60) {
        last_check = std::time(nullptr);
        s->station_->backups_due();
      }
      // Finished sessions' threads are joined as they end.
      for (auto it = workers.begin(); it != workers.end();) {
        if (it->finished->load()) {
          it->thread.join();
          it = workers.erase(it);
        } else {
          ++it;
        }
      }
      auto conn = l->accept(200);
      if (!conn || !conn->is_open()) continue;
      const std::string address = conn->peer().substr(0, conn->peer().rfind(':'));
      size_t from_address = 0;
      for (const Worker& w : workers) from_address += w.address == address;
      // (This machine's own connections, 127.x, are not counted: tests and tools on the station itself.)
      if (from_address >= kMaxSessionsPerAddress && address.rfind("127.", 0) != 0) {
        s->station_->log_refusal(conn->peer(), "too many connections from one address at once (" +
                                                   std::to_string(kMaxSessionsPerAddress) + ")");
        continue;
      }
      if (workers.size() >= kMaxSyncSessions) {
        // A station holds a bounded number of sessions: a flood of idle
        // connections cannot take all its threads.
        s->station_->log_refusal(conn->peer(), "too many connections at once (" + std::to_string(kMaxSyncSessions) +
                                                   "); the device is asked to try again");
        continue;   // closed as it goes out of scope
      }
      auto stream = std::make_shared<TcpBytes>(std::move(*conn), timeout_s * 1000);
      auto finished = std::make_shared<std::atomic<bool>>(false);
      workers.push_back({std::thread([station = s->station_.get(), stream, finished]() {
                           station->serve(*stream, stream->peer());
                           *finished = true;
                         }),
                         finished, address});
    }
    for (auto& w : workers) w.thread.join();
  });
  return server;
}

void SyncServer::stop() {
  stop_ = true;
  if (thread_.joinable()) thread_.join();
}

SyncServer::~SyncServer() { stop(); }

Result<SyncResult> sync_over_network(const std::string& host, int port, int timeout_s, const SyncRequest& request,
                                     SyncProgress* progress) {
  auto tcp = TcpStream::connect(host, port, timeout_s * 1000);
  if (!tcp) return tcp.problem();
  TcpBytes bytes(std::move(*tcp), timeout_s * 1000);
  return sync_as_device(bytes, request, progress);
}

SyncJob::SyncJob(std::string host, int port, SyncRequest request) : host_(std::move(host)), port_(port) {
  thread_ = std::thread([this, request = std::move(request)]() {
    auto r = sync_over_network(host_, port_, 30, request, &progress);
    {
      std::lock_guard<std::mutex> lock(mutex_);
      result_.emplace(std::move(r));
    }
    done_ = true;
  });
}

SyncJob::~SyncJob() {
  if (thread_.joinable()) thread_.join();
}

Result<SyncResult> SyncJob::result() {
  std::lock_guard<std::mutex> lock(mutex_);
  if (!result_) return make_problem("the sync has not finished");
  return *result_;
}

}  // namespace furrow
