#include "app/cli/cli_sync.h"

#include <nlohmann/json.hpp>

#include <csignal>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <ctime>
#include <iostream>
#include <memory>

#include <unistd.h>

#include "app/cli/output_safety.h"
#include "app/work/sync.h"
#include "platform/data_folder.h"
#include "platform/net.h"
#include "storage/backup.h"
#include "storage/text_file.h"
#include "storage/trial_store.h"

namespace furrow {
namespace {

constexpr int kExitFailed = 2;

int fail(const std::string& message) {
  std::cerr << terminal_safe(message) << "\n";
  return kExitFailed;
}

volatile std::sig_atomic_t g_stop = 0;
void on_stop(int) {
  // A second Ctrl+C stops at once: every merge is one transaction, so a
  // session cut here loses nothing that was reported merged.
  if (g_stop) std::_Exit(130);
  g_stop = 1;
}

Result<std::string> folder_or_default(const std::string& given) {
  if (!given.empty()) return given;
  return data_folder();
}


int sync_with(const SyncCliRequest& r, bool pairing) {
  auto folder = folder_or_default(r.data);
  if (!folder) return fail(folder.problem().message);
  auto saved = load_pairing(*folder);
  if (!saved) return fail(saved.problem().message);
  StationPairing where;
  if (*saved) where = **saved;
  if (!r.station.empty()) {
    auto hp = parse_host_port(r.station, kDefaultSyncPort);
    if (!hp) return fail(hp.problem().message);
    where.host = hp->first;
    where.port = hp->second;
  }
  if (where.host.empty())
    return fail("this device has not paired with a station: furrow pair --station ADDRESS --code CODE (the station "
                "shows both)");
  if (pairing && r.code.empty()) return fail("give the pairing code the station shows: --code CODE");
  SyncRequest request;
  request.trial_paths = r.dbs.empty() ? device_trial_files(*folder) : r.dbs;
  if (request.trial_paths.empty()) return fail(*folder + ": no device trial files to sync (furrow trial copy makes them)");
  request.token = pairing ? std::string() : where.token;
  request.code = r.code;
  request.others = r.others;
  request.on_paired = [&](const std::string& token) {
    StationPairing paired = where;
    paired.token = token;
    paired.paired_at = utc_now();
    if (auto s = save_pairing(*folder, paired); !s) std::cerr << "cannot save the pairing: " << s.problem().message << "\n";
    else std::cout << "paired with the station at " << where.host << ":" << where.port << "\n";
  };
  SyncProgress progress;
  auto result = sync_over_network(where.host, where.port, r.timeout_s, request, &progress);
  if (!result) {
    const std::string& why = result.problem().message;
    return fail("sync with " + where.host + ":" + std::to_string(where.port) + " stopped: " + why +
                (why.find("refused") == std::string::npos ? "; what was merged before stays (sync again to go on)" : ""));
  }
  if (!r.station.empty() && !pairing && result->token == where.token && (!*saved || (*saved)->host != where.host ||
                                                                        (*saved)->port != where.port)) {
    // The same pairing at a new address (the station moved): kept.
    where.paired_at = utc_now();
    (void)save_pairing(*folder, where);
  }
  int refused = 0;
  for (const SyncTrialResult& t : result->trials) {
    std::cout << terminal_safe(t.name) << ": ";
    if (!t.accepted) {
      ++refused;
      std::cout << "refused: " << terminal_safe(t.refusal) << "\n";
      continue;
    }
    std::cout << "sent " << t.sent << (t.sent == 1 ? " value" : " values") << ", received " << t.settlements
              << (t.settlements == 1 ? " settlement" : " settlements");
    if (t.received > t.settlements)
      std::cout << " and " << t.received - t.settlements << " other device value(s)" << (r.others ? "" : " they replace");
    std::cout << "\n";
  }
  std::cout << "synced: " << result->summary() << "\n";
  return refused ? kExitFailed : 0;
}

}  // namespace

int run_serve(const ServeRequest& r) {
  auto folder = folder_or_default(r.data);
  if (!folder) return fail(folder.problem().message);
  StationConfig config;
  config.data_folder = *folder;
  config.pairing_code = r.code;
  config.backup_folder = r.backup_to;
  config.keep_backups = r.keep;
  if (!r.code.empty() && (r.code.size() < 6 || r.code.size() > 32))
    return fail("a pairing code is 6 to 32 characters");
  if (!r.backup_to.empty()) {
    // The backup folder is tried now, not found wanting at the first sync.
    std::error_code ec;
    std::filesystem::create_directories(r.backup_to, ec);
    const std::string probe = (std::filesystem::path(r.backup_to) / ".furrow-write-test").string();
    if (ec || !write_text_file(probe, "ok\n"))
      return fail("cannot write backups to " + r.backup_to + (ec ? ": " + ec.message() : std::string()) +
                  "; choose a folder this station can write (a second disk, a USB drive)");
    std::filesystem::remove(probe, ec);
  }
  auto server = SyncServer::start(config, r.listen, r.port, r.timeout_s);
  if (!server) return fail(server.problem().message);
  struct sigaction sa {};
  sa.sa_handler = on_stop;
  sigaction(SIGINT, &sa, nullptr);
  sigaction(SIGTERM, &sa, nullptr);
  std::signal(SIGPIPE, SIG_IGN);
  const std::string addresses = local_addresses();
  std::cout << "Furrow station serving the trials in " << terminal_safe(*folder) << "\n"
            << "  address: " << (r.listen == "0.0.0.0" ? (addresses.empty() ? std::string("this machine") : addresses) : r.listen)
            << " port " << (*server)->port() << "\n"
            << "  pairing code: " << code_for_people((*server)->pairing_code()) << "\n"
            << (r.backup_to.empty() ? "  no backups (give --backup-to FOLDER, e.g. a second disk)\n"
                                    : "  backups to " + r.backup_to + " after each sync and daily\n")
            << "  stop with Ctrl+C" << std::endl;
  while (!g_stop) ::usleep(100 * 1000);
  std::cout << "stopping: finishing " << (*server)->active() << " session(s)" << std::endl;
  (*server)->stop();
  std::cout << "stopped" << std::endl;
  return 0;
}

int run_pair(const SyncCliRequest& r) {
  if (r.station.empty()) return fail("give the station's address: --station ADDRESS (the station shows it)");
  return sync_with(r, true);
}

int run_sync(const SyncCliRequest& r) { return sync_with(r, false); }

int run_device_today(const std::string& data, const std::string& day_given, bool json) {
  auto folder = folder_or_default(data);
  if (!folder) return fail(folder.problem().message);
  const std::string day = day_given.empty() ? utc_now().substr(0, 10) : day_given;
  {
    int y = 0, m = 0, d = 0;
    char tail = 0;
    static const int days_in[] = {31, 29, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
    const bool parsed = std::sscanf(day.c_str(), "%4d-%2d-%2d%c", &y, &m, &d, &tail) == 3 && day.size() == 10;
    const bool leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
    if (!parsed || m < 1 || m > 12 || d < 1 || d > days_in[m - 1] || (m == 2 && d == 29 && !leap))
      return fail("--day is a date written YYYY-MM-DD (UTC), not '" + day + "'");
  }
  {
    std::error_code ec;
    if (!std::filesystem::is_directory(*folder, ec)) return fail(*folder + ": no such data folder");
  }
  auto days = station_day(*folder, day);
  if (!days) return fail(days.problem().message);
  if (json) {
    nlohmann::json out = nlohmann::json::array();
    for (const DeviceDay& d : *days)
      out.push_back({{"trial", d.trial_name}, {"trial_uid", d.trial_uid}, {"device_id", d.device_id}, {"label", d.label},
                     {"revoked", d.revoked}, {"last_sync", d.last_sync}, {"synced_today", d.synced_today},
                     {"rows_today", d.rows_today}, {"rows_in_log", d.rows_in_log}});
    std::cout << out.dump(2) << "\n";
    return 0;
  }
  std::string trial;
  for (const DeviceDay& d : *days) {
    if (d.trial_name != trial) {
      trial = d.trial_name;
      std::cout << terminal_safe(trial) << " (" << day << ", UTC):\n";
    }
    std::cout << "  " << (d.revoked ? "REVOKED    " : d.synced_today ? "synced     " : "NOT SYNCED ") << terminal_safe(d.label)
              << " (" << d.device_id << ")";
    if (!d.last_sync.empty()) std::cout << ", last sync " << d.last_sync;
    std::cout << ", brought " << d.rows_today << (d.rows_today == 1 ? " value" : " values") << " today, "
              << d.rows_in_log << " in the log\n";
  }
  if (days->empty()) std::cout << "no devices enrolled in the trials of " << terminal_safe(*folder) << "\n";
  return 0;
}

int run_backup(const std::vector<std::string>& dbs, const std::string& data, const std::string& to, int keep) {
  std::vector<std::string> paths = dbs;
  if (paths.empty()) {
    auto folder = folder_or_default(data);
    if (!folder) return fail(folder.problem().message);
    std::error_code ec;
    for (const auto& e : std::filesystem::directory_iterator(*folder, ec))
      if (e.path().extension() == ".furrow") paths.push_back(e.path().string());
    if (paths.empty()) return fail(*folder + ": no trial files to back up");
  }
  int failed = 0;
  for (const std::string& p : paths) {
    auto b = backup_trial(p, to, keep);
    if (!b) {
      ++failed;
      std::cerr << terminal_safe(b.problem().message) << "\n";
      continue;
    }
    std::cout << "backed up " << terminal_safe(p) << " to " << terminal_safe(b->path) << ": " << b->log_rows
              << " rows, integrity checked\n";
  }
  return failed ? kExitFailed : 0;
}

int run_restore(const std::string& from, const std::string& db, bool replace) {
  if (auto s = restore_trial(from, db, replace); !s) return fail(s.problem().message);
  std::cout << "restored " << terminal_safe(db) << " from " << terminal_safe(from) << " (integrity checked)\n";
  return 0;
}

}  // namespace furrow
