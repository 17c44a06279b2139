#pragma once
// Day's-end subcommands: `bundle`, `merge`, `conflicts`, `settle`,
// `trial copy` and `device ...`. Exit codes: 0 done; 2 bad input or a refused bundle (the
// database is left as it was for that bundle).

#include <string>
#include <vector>

#include "storage/bundle.h"

namespace furrow {

int run_bundle(const std::string& db_path, const std::string& out, bool everything);
int run_merge(const std::string& db_path, const std::vector<std::string>& bundles);
int run_conflicts(const std::string& db_path, bool json);

struct SettleRequest {
  std::string db, plot, trait, keep, keep_value, value, missing, by, note;
  int occasion = 1;
};
int run_settle(const SettleRequest& r);

int run_trial_close(const std::string& db_path);
int run_trial_copy(const std::string& station_path, const std::string& device_path, const DeviceEnrolment& who);

// `device list|revoke|enrol|renew`: the keys a station enrolled.
int run_device_list(const std::string& db_path, bool json);
int run_device_revoke(const std::string& db_path, const std::string& device, const std::string& by,
                      const std::string& reason);
int run_device_enrol(const std::string& station_path, const std::string& device_path, const DeviceEnrolment& who);
int run_device_renew(const std::string& station_path, const std::string& device_path, const DeviceEnrolment& who);

}  // namespace furrow
