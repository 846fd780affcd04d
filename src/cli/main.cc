// SPDX-License-Identifier: Apache-2.0
// recofold command-line entry: parse, dispatch, map errors to exit codes.
//   0 success; 1 the work failed; 2 bad input or usage (ARCHITECTURE.md).
// Every error is ONE line on stderr:
//   recofold: error: <where>: <what was expected>     (exit 2)
//   recofold: failed: <what failed>                    (exit 1)
#include <CLI/CLI.hpp>

#include <cerrno>
#include <cmath>
#include <cstdlib>
#include <cstdio>
#include <cstring>
#include <iostream>
#include <vector>
#include <sstream>
#include <new>
#include <regex>

#include "cli_common.h"
#include "recofold/core/error.h"
#include "recofold/core/provenance.h"
#include "recofold/study/mpi_dispatch.h"

#include "command_registry.inc"

namespace {

// One line: newlines of library or parser messages become "; ".
std::string single_line(std::string s) {
  while (!s.empty() && (s.back() == '\n' || s.back() == ' ')) s.pop_back();
  std::string out;
  for (char c : s) {
    if (c == '\n') {
      if (!out.empty() && out.back() != ' ') out += "; ";
    } else if (c != '\r') {
      out += c;
    }
  }
  return out;
}

// CLI11 prints its range checks with the full digits of the type's limits
// ("not in range 0.000000 to 1797693134862315708...0.000000"): make them read
// like a person wrote them.
std::string readable_numbers(std::string s) {
  static const std::regex open_range(R"(Value (\S+) not in range (-?[0-9.]+) to [0-9]{20,}\.?[0-9]*)");
  s = std::regex_replace(s, open_range, "got $1, expected a number >= $2");
  static const std::regex range(R"(Value (\S+) not in range (-?[0-9.]+) to (-?[0-9.]+))");
  s = std::regex_replace(s, range, "got $1, expected a number from $2 to $3");
  static const std::regex trailing_zeros(R"((\d)\.0{6}\b)");
  s = std::regex_replace(s, trailing_zeros, "$1");
  static const std::regex huge(R"(\b[0-9]{20,}(\.[0-9]+)?)");
  s = std::regex_replace(s, huge, "(a number too large to use)");
  return s;
}

// Size flags: an upper bound each, checked while parsing, so a value that
// would make the program allocate gigabytes is refused naming the flag before
// any work (lower bounds and cross-checks stay with the commands).
struct FlagLimit {
  const char* name;
  double max;
};
constexpr FlagLimit kFlagLimits[] = {
    {"--views", 20000},        {"--detectors", 16384}, {"--spokes", 100000},     {"--count", 100000},
    {"--components", 10000},   {"--texture-blobs", 1000000}, {"--iters", 1000000}, {"--jobs", 1024},
    {"--supersample", 256},    {"--levels", 16},       {"--index", 1000000},
};

CLI::Validator at_most(double max) {
  return CLI::Validator(
      [max](std::string& value) -> std::string {
        char* end = nullptr;
        const double v = std::strtod(value.c_str(), &end);
        if (end == value.c_str()) return "";  // not a number: the option's own conversion reports it
        char buf[64];
        if (!(v <= max)) {
          std::snprintf(buf, sizeof buf, "got %s, expected at most %.0f", value.c_str(), max);
          return buf;
        }
        return "";
      },
      "", "at most");
}

// Every number flag must be finite: "nan" and "inf" are refused naming the flag.
CLI::Validator finite_number() {
  return CLI::Validator(
      [](std::string& value) -> std::string {
        char* end = nullptr;
        const double v = std::strtod(value.c_str(), &end);
        if (end == value.c_str()) return "";
        if (!std::isfinite(v)) return "got " + value + ", expected a finite number";
        return "";
      },
      "", "finite");
}

void install_flag_limits(CLI::App& app) {
  for (CLI::App* sub : app.get_subcommands([](CLI::App*) { return true; })) {
    for (CLI::Option* opt : sub->get_options()) {
      const std::string type = opt->get_type_name();
      if (type.rfind("FLOAT", 0) == 0 || type.rfind("INT", 0) == 0 || type.rfind("UINT", 0) == 0)
        opt->check(finite_number());
      for (const auto& limit : kFlagLimits)
        if (opt->check_lname(std::string(limit.name).substr(2))) opt->check(at_most(limit.max));
    }
  }
}

// Whatever a command printed must reach standard output; a failed write
// (a full disk, a closed pipe, /dev/full) is a failure of the work.
int check_stdout() {
  errno = 0;
  std::cout.flush();
  const bool stream_bad = !std::cout;
  const int saved = errno;
  if (std::fflush(stdout) != 0 || std::ferror(stdout) || stream_bad) {
    const int e = errno ? errno : saved;
    std::cerr << "recofold: failed: cannot write to standard output"
              << (e ? std::string(": ") + std::strerror(e) : std::string()) << "\n";
    return 1;
  }
  return 0;
}

// ---------------------------------------------------------------- MPI jobs
// Only `study` runs as an MPI job (mpi_dispatch.h), and MPI is started only
// when the launcher announced more than one process. Rank 0 prints; the other
// ranks print only their own failures ("rank N: ..."), and a failure that
// would leave other ranks waiting ends the whole job.

// This process's rank as the launcher announced it (0 when none).
int launch_rank() {
  for (const char* name : {"OMPI_COMM_WORLD_RANK", "PMI_RANK"}) {
    const char* v = std::getenv(name);
    if (v && *v) return std::atoi(v);
  }
  return 0;
}

// The sub-command word of the command line ("" when none).
std::string sub_command(int argc, char** argv) {
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    if (a == "--threads") ++i;
    else if (!a.empty() && a[0] != '-') return a;
  }
  return "";
}

// A start under a launcher with more than one process that cannot work as
// an MPI job: its exit code (2), else 0.
int refuse_mpi_launch(int argc, char** argv) {
  const int size = recofold::mpi_launch_size();
  if (size <= 1) return 0;
  const bool speak = launch_rank() == 0;
  if (!recofold::mpi_built()) {
    if (speak)
      std::cerr << "recofold: error: this build has no MPI support; started as one of " << size
                << " MPI processes it would run the whole command " << size
                << " times: run it without mpirun, or build with -DRECOFOLD_WITH_MPI=ON\n";
    return 2;
  }
  const std::string cmd = sub_command(argc, argv);
  if (cmd != "study") {
    if (speak)
      std::cerr << "recofold: error: only 'study' runs as an MPI job (started as one of " << size
                << " processes); run '" << (cmd.empty() ? std::string("recofold") : cmd) << "' without mpirun\n";
    return 2;
  }
  return 0;
}

// Ranks other than 0 of an MPI job.
bool other_rank() {
  const recofold::StudyMessenger* m = recofold::mpi_world();
  return m && m->rank() != 0;
}

// "rank N: " on the ranks other than 0, else "".
std::string rank_prefix() { return other_rank() ? "rank " + std::to_string(recofold::mpi_world()->rank()) + ": " : ""; }

// After a failure was printed: a rank other than 0, or rank 0 while other
// ranks work for it, ends the whole job (they would wait for it forever).
int failed_with(int code) {
  const recofold::StudyMessenger* m = recofold::mpi_world();
  if (m && m->size() > 1 && (m->rank() != 0 || m->workers_active)) {
    std::cerr.flush();
    recofold::mpi_abort(code);
  }
  return code;
}

int parse_and_run(CLI::App& app, int argc, char** argv) {
  using namespace recofold;
  try {
    app.parse(argc, argv);
  } catch (const ReportedByRankZero& e) {
    return e.exit_code();  // rank 0 printed why
  } catch (const CLI::ParseError& e) {
    // Help, version and usage errors: rank 0 prints them, once.
    if (other_rank()) return e.get_exit_code() == 0 ? 0 : 2;
    if (e.get_exit_code() == 0) {
      const int rc = app.exit(e);
      return check_stdout() ? 1 : rc;
    }
    if (e.get_name() == "RequiredError" && app.get_subcommands().empty()) {
      // Name the word that is not a sub-command, if there is one (skipping --threads' value).
      const std::string unknown = sub_command(argc, argv);
      if (!unknown.empty())
        std::cerr << "recofold: error: unknown sub-command '" << unknown << "'; run 'recofold --help' for the list\n";
      else
        std::cerr << "recofold: error: " << single_line(e.what()) << "; run 'recofold --help' for the list of commands\n";
      return 2;
    }
    if (dynamic_cast<const CLI::ExtrasError*>(&e) != nullptr) {
      // CLI11 lists the unexpected words last-first; name them in command-line order.
      const std::string what = single_line(e.what()), marker = "not expected: ";
      const size_t at = what.find(marker);
      if (at != std::string::npos) {
        std::vector<std::string> words;
        std::istringstream in(what.substr(at + marker.size()));
        for (std::string w; in >> w;) words.push_back(w);
        std::string listed;
        for (auto it = words.rbegin(); it != words.rend(); ++it) listed += (listed.empty() ? "" : " ") + *it;
        std::cerr << "recofold: error: unexpected argument" << (words.size() == 1 ? "" : "s") << ": " << listed
                  << " (see 'recofold " << (app.get_subcommands().empty() ? std::string("--help")
                                                                          : app.get_subcommands().front()->get_name() +
                                                                                " --help")
                  << "')\n";
        return 2;
      }
    }
    std::cerr << "recofold: error: " << readable_numbers(single_line(e.what())) << "\n";
    return 2;
  } catch (const InputError& e) {
    std::cerr << "recofold: error: " << rank_prefix() << single_line(e.what()) << "\n";
    return failed_with(2);
  } catch (const WorkError& e) {
    std::cerr << "recofold: failed: " << rank_prefix() << single_line(e.what()) << "\n";
    return failed_with(1);
  } catch (const std::bad_alloc&) {
    std::cerr << "recofold: failed: " << rank_prefix()
              << "out of memory (the inputs or flags ask for more memory than is available)\n";
    return failed_with(1);
  } catch (const std::exception& e) {
    std::cerr << "recofold: failed: " << rank_prefix() << single_line(e.what()) << "\n";
    return failed_with(1);
  }
  return check_stdout();
}

}  // namespace

int main(int argc, char** argv) {
  using namespace recofold;
  if (const int refused = refuse_mpi_launch(argc, argv)) return refused;
  if (mpi_launch_size() > 1 && !mpi_start(&argc, &argv)) {
    std::cerr << "recofold: failed: MPI could not be started (MPI_Init)\n";
    return 1;
  }
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
  app.add_option("--threads", ctx.threads, "Threads for FFTW/OpenMP, 0..1024 (default 0: all cores)")
      ->check(CLI::Range(0, 1024));
  app.add_flag("--quiet,-q", ctx.quiet, "No progress output");
  cli::register_all_commands(app, ctx);
  install_flag_limits(app);
  app.footer(kResearchUseLine);

  const int rc = parse_and_run(app, argc, argv);
  mpi_stop();
  return rc;
}
