// SPDX-License-Identifier: Apache-2.0
// recofold command-line entry: parse, dispatch, map errors to exit codes.
//   0 success; 1 the work failed; 2 bad input or usage (ARCHITECTURE.md).
#include <CLI/CLI.hpp>

#include <iostream>

#include "cli_common.h"
#include "recofold/core/error.h"
#include "recofold/core/provenance.h"

#include "command_registry.inc"

int main(int argc, char** argv) {
  using namespace recofold;
  cli::Context ctx;
  for (int i = 0; i < argc; ++i) ctx.command_line += (i ? " " : "") + std::string(argv[i]);

  CLI::App app{std::string("recofold ") + version() +
               ": simulate undersampled MRI/CT acquisitions of phantoms, reconstruct them with "
               "classical or learned priors, and score the results.\n" +
               kResearchUseLine};
  app.name("recofold");
  app.set_version_flag("--version", producer_string());
  app.require_subcommand(1);
  app.fallthrough();
  app.add_option("--threads", ctx.threads, "Threads for FFTW/OpenMP (default: all cores)")
      ->check(CLI::NonNegativeNumber);
  app.add_flag("--quiet,-q", ctx.quiet, "No progress output");
  cli::register_all_commands(app, ctx);
  app.footer(kResearchUseLine);

  try {
    app.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForAllHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForVersion& e) {
    return app.exit(e);
  } catch (const CLI::ParseError& e) {
    if (e.get_name() == "RequiredError" && app.get_subcommands().empty()) {
      // Name the word that is not a sub-command, if there is one (skipping --threads' value).
      std::string unknown;
      for (int i = 1; i < argc && unknown.empty(); ++i) {
        const std::string a = argv[i];
        if (a == "--threads") ++i;
        else if (!a.empty() && a[0] != '-') unknown = a;
      }
      if (!unknown.empty())
        std::cerr << "recofold: unknown sub-command '" << unknown << "'; run 'recofold --help' for the list\n";
      else
        std::cerr << "recofold: " << e.what() << "; run 'recofold --help' for the list of commands\n";
      return 2;
    }
    std::cerr << "recofold: " << e.what() << "\n";
    return 2;
  } catch (const InputError& e) {
    std::cerr << "recofold: error: " << e.what() << "\n";
    return 2;
  } catch (const WorkError& e) {
    std::cerr << "recofold: failed: " << e.what() << "\n";
    return 1;
  } catch (const std::exception& e) {
    std::cerr << "recofold: failed: " << e.what() << "\n";
    return 1;
  }
  return 0;
}
