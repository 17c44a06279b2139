#pragma once
// Where Furrow keeps its files on this device: trial databases and settings.
// Linux: $FURROW_DATA_DIR if set, else $XDG_DATA_HOME/furrow, else
// ~/.local/share/furrow. The folder is created when missing.

#include <string>

#include "core/result.h"

namespace furrow {

Result<std::string> data_folder();

}  // namespace furrow
