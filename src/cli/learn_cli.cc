// SPDX-License-Identifier: Apache-2.0
// The learned backend of the CLI: the learn module (libtorch) is a shared
// module loaded at run time, only by the commands that run, inspect or train
// learned models. Every other command starts without loading libtorch.
#include "learn_cli.h"

#include <dlfcn.h>
#include <unistd.h>

#include <climits>
#include <cstdlib>
#include <mutex>
#include <string>

#include "recofold/recon/learned_backend.h"

namespace recofold::cli {

namespace {

// The folder of the running executable ("" when unknown).
std::string executable_dir() {
  char buf[PATH_MAX];
  const ssize_t n = ::readlink("/proc/self/exe", buf, sizeof buf - 1);
  if (n <= 0) return "";
  std::string p(buf, static_cast<size_t>(n));
  const size_t slash = p.rfind('/');
  return slash == std::string::npos ? "" : p.substr(0, slash);
}

constexpr const char* kModuleName = "librecofold_learn.so";

// Where the learn module is: RECOFOLD_LEARN_MODULE when set, else lib/ beside
// the executable (the build folder has recofold and lib/ side by side).
std::string module_path() {
  if (const char* env = std::getenv("RECOFOLD_LEARN_MODULE"); env && *env) return env;
  return executable_dir() + "/lib/" + kModuleName;
}

void load_learn_module() {
  const std::string path = module_path();
  if (::access(path.c_str(), R_OK) != 0) {
    set_learned_backend_absence("the learn module (libtorch) is missing: no " + path +
                                " (it is built with the program unless -DRECOFOLD_WITH_LIBTORCH=OFF; "
                                "RECOFOLD_LEARN_MODULE names another file)");
    return;
  }
  void* handle = ::dlopen(path.c_str(), RTLD_NOW | RTLD_LOCAL);
  if (!handle) {
    const char* why = ::dlerror();
    set_learned_backend_absence("cannot load the learn module " + path + ": " + (why ? why : "unknown reason"));
    return;
  }
  using Install = int (*)();
  auto install = reinterpret_cast<Install>(::dlsym(handle, "recofold_learn_module_install"));
  if (!install || install() != 0)
    set_learned_backend_absence("the learn module " + path + " has no working entry point (a different build?)");
  // The module stays loaded for the life of the process (the backend lives in it).
}

}  // namespace

void install_learned_backend() {
  static std::once_flag once;
  std::call_once(once, load_learn_module);
}

}  // namespace recofold::cli
