// Runs every file of a corpus folder through LLVMFuzzerTestOneInput once, so
// that ordinary builds (without libFuzzer) test the seed corpus.
//
// usage: fuzz_corpus_runner FOLDER...

#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size);

int main(int argc, char** argv) {
  int files = 0;
  for (int i = 1; i < argc; ++i) {
    for (const auto& entry : std::filesystem::recursive_directory_iterator(argv[i])) {
      if (!entry.is_regular_file()) continue;
      std::ifstream in(entry.path(), std::ios::binary);
      std::ostringstream s;
      s << in.rdbuf();
      const std::string bytes = s.str();
      LLVMFuzzerTestOneInput(reinterpret_cast<const std::uint8_t*>(bytes.data()), bytes.size());
      ++files;
    }
  }
  std::printf("%d corpus files ran without a crash\n", files);
  std::printf("%d passed, 0 failed\n", files);
  return files > 0 ? 0 : 1;
}
