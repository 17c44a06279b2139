#include "storage/text_file.h"

#include <filesystem>
#include <fstream>

namespace furrow {

Status write_text_file(const std::string& path, const std::string& text) {
  const std::string part = path + ".part";
  {
    std::ofstream f(part, std::ios::binary | std::ios::trunc);
    f << text;
    f.flush();
    f.close();
    std::error_code size_ec;
    // A full disk may accept the bytes into a buffer and lose them on close:
    // the file must hold all of them before it replaces anything.
    if (!f || std::filesystem::file_size(part, size_ec) != text.size() || size_ec) {
      std::error_code ec;
      std::filesystem::remove(part, ec);
      const auto space = std::filesystem::space(std::filesystem::absolute(path).parent_path(), ec);
      const bool full = !ec && space.available < text.size() + 4096;
      return make_problem("cannot write " + path + (full ? ": the disk is full" : "") +
                          "; the earlier file, if any, is unchanged");
    }
  }
  std::error_code ec;
  std::filesystem::rename(part, path, ec);
  if (ec) return make_problem("cannot write " + path + ": " + ec.message());
  return ok_status();
}

}  // namespace furrow
