#include "storage/text_file.h"

#include <filesystem>
#include <fstream>

namespace furrow {

Status check_output_file(const std::string& path) {
  namespace fs = std::filesystem;
  std::error_code ec;
  const fs::file_status st = fs::symlink_status(path, ec);
  if (fs::is_directory(st)) return make_problem(path + " is a folder; give a file name");
  if (fs::is_symlink(st)) return make_problem(path + " is a link; give the file itself");
  if (fs::exists(st) && !fs::is_regular_file(st)) return make_problem(path + " is not a plain file (a device?)");
  const fs::path folder = fs::absolute(path, ec).parent_path();
  if (!fs::is_directory(folder, ec)) return make_problem("the folder " + folder.string() + " does not exist");
  return ok_status();
}

Status write_text_file(const std::string& path, const std::string& text) {
  if (auto ok = check_output_file(path); !ok) return ok;
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
