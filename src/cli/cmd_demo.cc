// SPDX-License-Identifier: Apache-2.0
// `recofold demo`: the small study of configs/demo.toml (MRI and CT protocols on our phantoms) and its report.
#include <unistd.h>

#include <memory>
#include <string>
#include <vector>

#include "cli_common.h"
#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "study_cli.h"

namespace recofold::cli {

namespace {

struct DemoFlags {
  std::string out = "demo-out";
  std::string config;
  int jobs = 0;
};

// configs/demo.toml from the current folder, or beside the executable's
// build folder (build/recofold -> ../configs).
std::string find_demo_config() {
  std::vector<std::string> candidates = {"configs/demo.toml"};
  char exe[4096];
  const ssize_t n = ::readlink("/proc/self/exe", exe, sizeof exe - 1);
  if (n > 0) {
    std::string dir(exe, size_t(n));
    for (int up = 0; up < 3; ++up) {
      dir = dir.substr(0, dir.find_last_of('/'));
      candidates.push_back(dir + "/configs/demo.toml");
    }
  }
  for (const auto& c : candidates)
    if (file_exists(c)) return c;
  throw InputError("configs/demo.toml", "--config",
                   "not found in the current folder or beside the executable; give --config");
}

void run(const DemoFlags& f, const Context& ctx) {
  const std::string config = f.config.empty() ? find_demo_config() : f.config;
  say(ctx, "recofold demo: running " + config + " into " + f.out);
  const std::string report = run_study_command(ctx, config, f.out, f.jobs, "");
  if (!report.empty()) say(ctx, "open " + report + " in a browser");
}

}  // namespace

void register_cmd_demo(CLI::App& app, Context& ctx) {
  auto flags = std::make_shared<DemoFlags>();
  CLI::App* sub = app.add_subcommand(
      "demo", "Run the demo study (MRI and CT protocols on our phantoms) and print where its report is");
  sub->add_option("--out", flags->out, "Output folder")->capture_default_str();
  sub->add_option("--config", flags->config, "Another study config (default configs/demo.toml)");
  sub->add_option("--jobs", flags->jobs, "Cases run in parallel (default 0: all cores)");
  sub->footer(kResearchUseLine);
  sub->callback([flags, &ctx] { run(*flags, ctx); });
}

}  // namespace recofold::cli
