#include <cstdlib>
#include <filesystem>

#include "platform/data_folder.h"

namespace furrow {

Result<std::string> data_folder() {
  std::filesystem::path dir;
  if (const char* own = std::getenv("FURROW_DATA_DIR"); own && *own) dir = own;
  else if (const char* xdg = std::getenv("XDG_DATA_HOME"); xdg && *xdg) dir = std::filesystem::path(xdg) / "furrow";
  else if (const char* home = std::getenv("HOME"); home && *home) dir = std::filesystem::path(home) / ".local/share/furrow";
  else return make_problem("no data folder: set FURROW_DATA_DIR or HOME");
  std::error_code ec;
  std::filesystem::create_directories(dir, ec);
  if (ec) return make_problem("cannot create the data folder " + dir.string() + ": " + ec.message());
  return dir.string();
}

}  // namespace furrow
