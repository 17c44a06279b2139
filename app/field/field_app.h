#pragma once
// `furrow field`: the touch app for the crew, opened on a trial database or
// on the Trials screen.

#include <string>

namespace furrow {

struct FieldAppOptions {
  std::string db;               // empty: start on the Trials screen
  std::string demo_db;          // the demo trial the Trials screen offers (when it exists)
  std::string observer;         // overrides the saved setting
  std::string screenshot{};     // when set: draw a few frames, write this PNG, exit
  // When set: after each frame whose tappable items moved, this file holds
  // one line per item, "x0 y0 x1 y1 label" in window pixels (for checks that
  // drive the real app).
  std::string targets_out{};
  int width = 1280, height = 800;
  // trials, record, map, check, leaving, settings or help
  std::string start_screen = "record";
  // Benchmark: draw this many frames without waiting for input, print the
  // frame times and the time to the first drawn frame, then exit.
  int bench_frames = 0;
};

int run_field_app(const FieldAppOptions& options);

}  // namespace furrow
