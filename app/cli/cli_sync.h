#pragma once
// Network sync and backups from the command line: `serve` (the station),
// `pair` and `sync` (a device), `device today` (the station manager's view
// of the day), `backup` and `restore`. Exit codes: 0 done; 2 refused or
// failed (in words on stderr).

#include <string>
#include <vector>

namespace furrow {

struct ServeRequest {
  std::string data, listen = "0.0.0.0", code, backup_to;
  int port = 47110;
  int keep = 14;
  int timeout_s = 30;
};
// Serves until SIGINT or SIGTERM; prints the address and the pairing code.
int run_serve(const ServeRequest& r);

struct SyncCliRequest {
  std::string data, station, code;
  std::vector<std::string> dbs;   // default: every device trial in the data folder
  bool others = false;
  int timeout_s = 30;
};
// `pair` (with --station and --code; saves the pairing) and `sync`.
int run_pair(const SyncCliRequest& r);
int run_sync(const SyncCliRequest& r);

int run_device_today(const std::string& data, const std::string& day, bool json);

int run_backup(const std::vector<std::string>& dbs, const std::string& data, const std::string& to, int keep);
int run_restore(const std::string& from, const std::string& db, bool replace);

}  // namespace furrow
