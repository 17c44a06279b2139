#include "storage/text_file.h"

#include <filesystem>
#include <fstream>

namespace furrow {

Status write_text_file(const std::string& path, const std::string& text) {
  const std::string part = path + ".part";
  {
    std::ofstream f(part, std::ios::binary | std::ios::trunc);
    if (!(f << text) || !f.flush()) {
      std::error_code ec;
      std::filesystem::remove(part, ec);
      return make_problem("cannot write " + path);
    }
  }
  std::error_code ec;
  std::filesystem::rename(part, path, ec);
  if (ec) return make_problem("cannot write " + path + ": " + ec.message());
  return ok_status();
}

}  // namespace furrow
