// crash_writer: appends observations to a trial database as fast as it can
// and prints "SAVED <device> <sequence>" after each commit has returned. The
// crash test kills it with SIGKILL at random moments and then checks that
// every entry reported as saved is in the database.
//
// usage: crash_writer DB

#include <cstdio>

#include "storage/trial_store.h"

int main(int argc, char** argv) {
  if (argc != 2) return 2;
  auto open = furrow::open_trial_database(argv[1]);
  if (!open) {
    std::fprintf(stderr, "%s\n", open.problem().message.c_str());
    return 2;
  }
  const auto& t = open->trial;
  furrow::ObservationWriter writer(open->db);
  for (long i = 0;; ++i) {
    furrow::NewObservation o;
    o.plot_id = t.plot_ids[static_cast<size_t>(i) % t.plot_ids.size()];
    o.trait_id = t.trait_ids[static_cast<size_t>(i / static_cast<long>(t.plot_ids.size())) % t.trait_ids.size()];
    o.value = std::to_string(50 + i % 40);
    o.number = 50.0 + static_cast<double>(i % 40);
    o.observer = "crash test";
    auto key = writer.append(t.device_id, o, furrow::utc_now());
    if (!key) {
      std::fprintf(stderr, "%s\n", key.problem().message.c_str());
      return 1;
    }
    std::printf("SAVED %s %lld\n", key->device_id.c_str(), static_cast<long long>(key->sequence));
    std::fflush(stdout);
  }
}
