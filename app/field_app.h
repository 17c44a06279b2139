#pragma once
// `furrow field`: the touch app for the crew, opened on a trial database.

#include <string>

namespace furrow {

struct FieldAppOptions {
  std::string db;
  std::string observer;         // overrides the saved setting
  std::string screenshot;       // when set: draw a few frames, write this PNG, exit
  int width = 1280, height = 800;
  std::string start_screen = "record";   // record, leaving or settings (for screenshots)
};

int run_field_app(const FieldAppOptions& options);

}  // namespace furrow
