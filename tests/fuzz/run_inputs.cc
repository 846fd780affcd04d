// SPDX-License-Identifier: Apache-2.0
// main() for a fuzz target built without libFuzzer (the gcc and sanitizer
// builds): feeds every file of the folders given (the seed corpus and the
// regression inputs of crashes found earlier) to LLVMFuzzerTestOneInput once.
// A crash or sanitizer finding ends the process like it would under
// libFuzzer; a folder without any input is an error (exit 1), so a misplaced
// corpus cannot pass silently.
#include <dirent.h>
#include <sys/stat.h>

#include <algorithm>
#include <cstdint>
#include <cstdio>
#include <fstream>
#include <iterator>
#include <string>
#include <vector>

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size);

namespace {

void collect(const std::string& path, std::vector<std::string>& files) {
  struct stat st;
  if (::stat(path.c_str(), &st) != 0) return;
  if (S_ISREG(st.st_mode)) {
    files.push_back(path);
    return;
  }
  if (!S_ISDIR(st.st_mode)) return;
  DIR* d = ::opendir(path.c_str());
  if (!d) return;
  std::vector<std::string> names;
  while (const dirent* e = ::readdir(d)) {
    const std::string n = e->d_name;
    if (n != "." && n != ".." && n[0] != '.') names.push_back(n);
  }
  ::closedir(d);
  std::sort(names.begin(), names.end());
  for (const std::string& n : names) collect(path + "/" + n, files);
}

}  // namespace

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr, "usage: %s FOLDER_OR_FILE...\n", argv[0]);
    return 1;
  }
  int total = 0;
  for (int a = 1; a < argc; ++a) {
    std::vector<std::string> files;
    collect(argv[a], files);
    for (const std::string& f : files) {
      std::ifstream in(f, std::ios::binary);
      const std::vector<char> bytes((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
      LLVMFuzzerTestOneInput(reinterpret_cast<const uint8_t*>(bytes.data()), bytes.size());
      ++total;
    }
    std::printf("%s: %zu inputs\n", argv[a], files.size());
  }
  if (total == 0) {
    std::fprintf(stderr, "no inputs found\n");
    return 1;
  }
  std::printf("%d inputs, no crash\n", total);
  return 0;
}
