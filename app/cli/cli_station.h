#pragma once
// Day's-end subcommands: `bundle`, `merge`, `conflicts`, `settle` and
// `trial copy`. Exit codes: 0 done; 2 bad input or a refused bundle (the
// database is left as it was for that bundle).

#include <string>
#include <vector>

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
int run_trial_copy(const std::string& station_path, const std::string& device_path);

}  // namespace furrow
