#pragma once
// Day's end over the local network: a device syncs its trials with the
// station in one action, with the same signed bundles and merge rules as the
// files (storage/bundle.h): nothing is trusted because it came over the
// network.
//
// The connection is storage/secure_channel.h (libsodium key exchange and
// secret streams). Inside it, in order:
//   device  -> hello    {trials: [{uid, device_id}]}
//   station -> station  {trials: [{uid, sig}]}: for each trial it serves, the
//              trial's station key signs (session_hash, "station", uid); the
//              device checks it against the station key its copy pinned and
//              stops at once when one fails ("not your station").
//   device  -> auth     {token | code, trials: [{uid, device_id, sig}]}: the
//              device's enrolled key signs (session_hash, "device", uid,
//              device_id). A device pairs once with the station's pairing
//              code and is given a token for later syncs; the code is sent
//              only after the station proved itself.
//   station -> welcome  {token?, trials: [{uid, accepted, reason, holds}]}:
//              each trial is refused by name when the device is unknown to
//              it, revoked, or its signature does not match its enrolled key.
//   Then per accepted trial: the device sends its rows the station lacks in
//   bundles of at most kSyncChunkRows rows, each merged (committed) by the
//   station on arrival, the reply saying what it now holds; then the device
//   asks ("want", with what it holds) and merges the station's bundles until
//   the station has nothing more for it: its settlements (and the rows they
//   replace), or every row when the device asks for other devices' rows.
//   Finally "bye" both ways.
// Every chunk is committed where it arrives, so a connection cut at any byte
// leaves each side with whole bundles only; syncing again starts from what
// each side holds (idempotent; a day's rows are not sent again from zero).
//
// The station logs every session and every refusal (wrong pairing code,
// unknown or revoked device, a message that does not open) in
// <data folder>/sync/log.jsonl, one JSON object a line.

#include <atomic>
#include <cstdint>
#include <functional>
#include <map>
#include <memory>
#include <mutex>
#include <optional>
#include <string>
#include <thread>
#include <vector>

#include "core/result.h"
#include "storage/secure_channel.h"

namespace furrow {

inline constexpr int kDefaultSyncPort = 47110;
inline constexpr std::int64_t kSyncChunkRows = 2000;
inline constexpr size_t kMaxSyncSessions = 32;   // sessions a station holds at once
inline constexpr size_t kMaxSessionsPerAddress = 4;   // ... from one network address
inline constexpr int kHandshakeSeconds = 20;      // to prove who it is, in all

// --- The station ---------------------------------------------------------

struct StationConfig {
  std::string data_folder;        // the trials served: every station trial file (*.furrow) in it
  std::string pairing_code;       // empty: a new 6-digit code
  std::string backup_folder;      // empty: no backups
  int keep_backups = 14;          // per trial
  int max_wrong_codes = 10;       // then pairing is closed until the station restarts
};

// One line of the station's sync log.
struct SyncLogEntry {
  std::string at, peer, event;    // event: "synced", "refused", "paired", "backup", "failed"
  std::string trial_uid, trial_name, device_id, device_label;
  std::int64_t received = 0, sent = 0;   // rows merged from the device; rows sent to it
  std::string detail;
};

class SyncStation {
 public:
  explicit SyncStation(StationConfig config);
  const std::string& pairing_code() const { return config_.pairing_code; }
  const StationConfig& config() const { return config_; }

  // Serves one connection to its end; every outcome is logged. Safe to call
  // from several threads at once (one per connection).
  void serve(ByteStream& stream, const std::string& peer);
  // Takes a backup of every served trial when the last is a day old (and
  // of `trial_path` at once when given); logs each.
  void backups_due(const std::string& trial_path = {});
  // Sessions running now.
  int active() const { return active_.load(); }
  void log_refusal(const std::string& peer, const std::string& why);

 private:
  void serve_session(ByteStream& stream, const std::string& peer);
  void log(const SyncLogEntry& e);
  struct Pairing;
  bool check_token(const std::string& token);
  std::string pair_new(const std::string& peer);
  StationConfig config_;
  std::mutex log_mutex_, pairing_mutex_, backup_mutex_, merge_locks_mutex_;
  std::map<std::string, std::unique_ptr<std::mutex>> merge_locks_;   // trial uid -> one merge at a time
  std::map<std::string, int> wrong_codes_;   // network address -> wrong pairing codes
  std::atomic<bool> pairing_damaged_{false};
  std::atomic<int> active_{0};
  std::map<std::string, std::string> last_backup_day_;   // trial path -> YYYY-MM-DD
};

// A station serving on the network: a thread takes connections and gives each
// its own thread (SyncStation::serve); backups fall due each minute. Stops
// (and waits for the sessions under way) when stopped or destroyed.
class SyncServer {
 public:
  static Result<std::unique_ptr<SyncServer>> start(StationConfig config, const std::string& listen_address, int port,
                                                   int timeout_s);
  ~SyncServer();
  void stop();
  int port() const { return port_; }
  const std::string& pairing_code() const { return station_->pairing_code(); }
  int active() const { return station_->active(); }

 private:
  SyncServer() = default;
  std::unique_ptr<SyncStation> station_;
  std::thread thread_;
  std::atomic<bool> stop_{false};
  int port_ = 0;
};

// The pairing code as people read it: "4069 2800" (the digits are what is typed).
std::string code_for_people(const std::string& code);

// The station's log, oldest first (unreadable lines skipped).
std::vector<SyncLogEntry> read_sync_log(const std::string& data_folder);

// The manager's view of the day: every device enrolled in the served trials,
// when it last synced, whether today, and what it brought today.
struct DeviceDay {
  std::string trial_name, trial_uid, device_id, label;
  bool revoked = false;
  std::string last_sync;          // UTC time of the last session, "" when never
  bool synced_today = false;      // a session on `day` (UTC date)
  std::int64_t rows_today = 0;    // rows merged from it on `day` (network and files)
  std::int64_t rows_in_log = 0;
};
Result<std::vector<DeviceDay>> station_day(const std::string& data_folder, const std::string& day);

// --- The device ----------------------------------------------------------

// Where this device syncs (kept in its data folder, station.json).
struct StationPairing {
  std::string host;
  int port = kDefaultSyncPort;
  std::string token;              // given by the station at pairing
  std::string paired_at;
};
Result<std::optional<StationPairing>> load_pairing(const std::string& data_folder);
Status save_pairing(const std::string& data_folder, const StationPairing& pairing);

struct SyncProgress {
  std::atomic<std::int64_t> done{0}, total{0};   // rows moved of rows known to move
  std::atomic<int> trial{0}, trials{0};
};

struct SyncTrialResult {
  std::string path, name;
  bool accepted = false;
  std::string refusal;            // why the station or the device refused it
  std::int64_t sent = 0;          // rows the station merged from this device
  std::int64_t received = 0;      // rows merged here from the station
  std::int64_t settlements = 0;   // of those, the station's own (settlements)
};
struct SyncResult {
  std::vector<SyncTrialResult> trials;
  std::string token;              // the station's token (new when this sync paired)
  std::string summary() const;    // "sent 412 values, received 3 settlements"
};

struct SyncRequest {
  std::vector<std::string> trial_paths;   // this device's trial files
  std::string token;                      // from an earlier pairing, else empty
  std::string code;                       // the station's pairing code (first time)
  bool others = false;                    // also receive other devices' rows
  // Called as soon as the station hands out a token (a new pairing), before
  // any data moves: a sync cut later must not lose the pairing.
  std::function<void(const std::string& token)> on_paired;
};
// Runs the device's side over `stream` (connected to the station).
Result<SyncResult> sync_as_device(ByteStream& stream, const SyncRequest& request, SyncProgress* progress);

// Connects to host:port and runs sync_as_device.
Result<SyncResult> sync_over_network(const std::string& host, int port, int timeout_s, const SyncRequest& request,
                                     SyncProgress* progress);

// A sync run in the background (the field app's "Sync with station"): the
// screen reads `progress` every frame and takes the result once done().
class SyncJob {
 public:
  SyncJob(std::string host, int port, SyncRequest request);
  ~SyncJob();
  bool done() const { return done_.load(); }
  SyncProgress progress;
  Result<SyncResult> result();   // once done()
  const std::string& host() const { return host_; }
  int port() const { return port_; }

 private:
  std::string host_;
  int port_;
  std::atomic<bool> done_{false};
  std::mutex mutex_;
  std::optional<Result<SyncResult>> result_;
  std::thread thread_;
};

// This device's trial files in `data_folder` (device copies only).
std::vector<std::string> device_trial_files(const std::string& data_folder);

}  // namespace furrow
