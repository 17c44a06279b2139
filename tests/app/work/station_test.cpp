// The station's day's-end work: importing a folder of bundles into the
// trials they belong to, one bundle per step; bundles, data and report
// written where the app puts them.

#include "app/work/station.h"

#include <doctest/doctest.h>

#include <filesystem>
#include <fstream>

#include "app/work/record_session.h"
#include "storage/bundle.h"
#include "storage/settle.h"
#include "tests/test_support.h"

namespace furrow {
namespace {

namespace fs = std::filesystem;

TEST_CASE("a folder of bundles goes into the right trials, one bundle per step, refusals said in words") {
  const fs::path data = test::scratch_dir("station_data");
  fs::remove_all(data);
  fs::create_directories(data / "bundles");
  const std::string station = (data / "oats.furrow").string();
  fs::copy_file(test::fresh_demo_trial("station_src.furrow"), station);
  const fs::path devices = test::scratch_dir("station_devices");
  fs::remove_all(devices);
  fs::create_directories(devices);
  for (const char* name : {"a", "b"}) {
    const std::string dev = (devices / (std::string(name) + ".furrow")).string();
    REQUIRE(copy_trial_for_device(station, dev, DeviceEnrolment{"", "Test manager"}).ok());
    auto s = RecordSession::open(dev, name);
    REQUIRE(s.ok());
    s->set_trait(1);
    REQUIRE(s->jump_to("101").ok());
    auto out = s->enter(name[0] == 'a' ? "96" : "69");
    if (out.kind == EntryOutcome::Kind::needs_confirmation) out = s->confirm();
    REQUIRE(out.kind == EntryOutcome::Kind::saved);
    auto written = write_device_bundle(dev, (data / "bundles").string());
    REQUIRE(written.ok());
    CHECK(fs::path(*written).extension() == ".bundle");
  }
  // A bundle of a trial this station does not hold, and a stray file.
  {
    // Another trial's station (elsewhere) and a device of it.
    const std::string other = (devices / "other.furrow").string();
    fs::copy_file(test::fresh_demo_trial("station_other_src.furrow"), other);
    const std::string other_device = (devices / "other_device.furrow").string();
    REQUIRE(copy_trial_for_device(other, other_device, DeviceEnrolment{"", "Test manager"}).ok());
    {
      auto s = RecordSession::open(other_device, "Oda");
      REQUIRE(s.ok());
      REQUIRE(s->skip("flooded", "").ok());
    }
    REQUIRE(write_device_bundle(other_device, (data / "bundles").string()).ok());
    std::ofstream(data / "bundles" / "zz-notes.bundle") << "not a bundle";
  }
  StationImport import((data / "bundles").string(), data.string());
  REQUIRE(import.total() == 4);
  int steps = 0;
  while (!import.done()) {
    CHECK(import.finished() == static_cast<size_t>(steps));
    CHECK_FALSE(import.current_file().empty());
    import.step();
    ++steps;
  }
  CHECK(steps == 4);
  int merged = 0, no_trial = 0, refused = 0;
  for (const BundleOutcome& o : import.outcomes()) {
    CAPTURE(o.file);
    CAPTURE(o.message);
    if (o.merged) {
      ++merged;
      CHECK(o.observations_added == 1);
    } else if (o.message.find("no trial") != std::string::npos) {
      ++no_trial;
    } else {
      ++refused;
      CHECK(o.message.find("not a Furrow bundle") != std::string::npos);
    }
  }
  CHECK(merged == 2);
  CHECK(no_trial + refused == 2);
  // The open trial may live outside the data folder: passed along, its bundle
  // finds it; the folder's trials are not listed twice.
  {
    StationImport again((data / "bundles").string(), data.string(),
                        {(devices / "other.furrow").string(), station});
    while (!again.done()) again.step();
    int merged_now = 0;
    for (const BundleOutcome& o : again.outcomes()) merged_now += o.merged;
    CHECK(merged_now == 3);   // a, b (nothing new) and the other trial's bundle; not the stray file
  }
  // With the station's folders, every bundle read leaves incoming: merged to
  // done, refused to refused; one for a trial not here stays to wait.
  {
    const BundleFolders folders = bundle_folders(data.string());
    fs::create_directories(folders.incoming);
    for (const auto& e : fs::directory_iterator(data / "bundles"))
      if (e.path().extension() == ".bundle") fs::rename(e.path(), fs::path(folders.incoming) / e.path().filename());
    StationImport filed(folders.incoming, data.string(), {}, &folders);
    while (!filed.done()) filed.step();
    const auto count = [](const std::string& dir) {
      size_t n = 0;
      if (fs::exists(dir))
        for (const auto& e : fs::directory_iterator(dir)) n += e.path().extension() == ".bundle";
      return n;
    };
    CHECK(count(folders.done) == 2);
    CHECK(count(folders.refused) == 1);     // the stray file
    CHECK(count(folders.incoming) == 1);    // the other trial's, waiting for it
    StationImport twice(folders.incoming, data.string(), {}, &folders);
    CHECK(twice.total() == 1);              // what was read is not read again
  }
  // The two devices disagree on plot 101: the station lists it.
  auto open = open_trial_database(station);
  REQUIRE(open.ok());
  auto conflicts = list_conflicts(open->db, open->trial);
  REQUIRE(conflicts.ok());
  CHECK(conflicts->size() == 1);

  // Exports land in the folder, named after the trial file.
  auto csv = export_clean_data(station, (data / "exports").string());
  REQUIRE(csv.ok());
  CHECK(fs::path(*csv).filename() == "oats.csv");
  std::ifstream in(*csv);
  std::string header;
  std::getline(in, header);
  CHECK(header.find("height_cm") != std::string::npos);
  auto html = export_report(station, (data / "exports").string());
  REQUIRE(html.ok());
  CHECK(fs::file_size(*html) > 10000);
}

}  // namespace
}  // namespace furrow
