// SPDX-License-Identifier: Apache-2.0
// Parallel, resumable, sharded execution of a study and merging of shard folders.
#include "recofold/study/study_runner.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>
#include <omp.h>

#include <algorithm>
#include <cerrno>
#include <chrono>
#include <cstring>
#include <map>
#include <mutex>
#include <optional>
#include <set>
#include <thread>

#include "recofold/core/atomic_file.h"
#include "recofold/core/error.h"
#include "recofold/core/json.h"
#include "recofold/core/provenance.h"
#include "recofold/io/image_file.h"
#include "recofold/io/measurement_file.h"
#include "recofold/ops/fft.h"
#include "recofold/study/case_runner.h"
#include "recofold/study/folder_lock.h"
#include "recofold/study/learned_models.h"
#include "recofold/study/comparisons.h"
#include "recofold/study/report.h"
#include "recofold/study/results_table.h"
#include "recofold/study/summary.h"
#include "study_util.h"

namespace recofold {

namespace {

bool is_dir(const std::string& p) {
  struct stat st;
  return ::stat(p.c_str(), &st) == 0 && S_ISDIR(st.st_mode);
}

void make_dir(const std::string& p) {
  if (is_dir(p)) return;
  if (::mkdir(p.c_str(), 0777) != 0 && !is_dir(p)) throw WorkError("cannot create folder '" + p + "'");
}

std::string parent_of(const std::string& p) {
  std::string s = p;
  while (s.size() > 1 && s.back() == '/') s.pop_back();
  const size_t slash = s.find_last_of('/');
  if (slash == std::string::npos) return ".";
  return slash == 0 ? "/" : s.substr(0, slash);
}

// The keys of manifest.json a run or a merge checks.
struct ManifestKeys {
  std::string config_hash, shard, config_dir;
};

// Reads `path` (written by write_manifest). Text that is not a JSON object
// with string members config_hash and shard is reported as corrupt.
ManifestKeys read_manifest(const std::string& path) {
  const std::string corrupt =
      "is corrupt (expected a JSON object with config_hash and shard); remove the folder or choose another output "
      "folder";
  JsonValue doc;
  try {
    doc = parse_json(read_text_file(path), path, "");
  } catch (const InputError& e) {
    throw InputError(path, "", corrupt + "; " + e.reason());
  }
  const auto text = [&](const char* key, bool required) {
    const JsonValue* v = doc.find(key);
    if (v && v->kind == JsonValue::Kind::kString && !v->text.empty()) return v->text;
    if (required) throw InputError(path, v ? key : "", corrupt);
    return std::string();
  };
  ManifestKeys m;
  m.config_hash = text("config_hash", true);
  m.shard = text("shard", true);
  m.config_dir = text("config_dir", false);
  return m;
}

std::string config_dir(const StudyConfig& c) {
  char buf[4096];
  std::string dir = parent_of(c.file.empty() ? "./x" : c.file);
  if (::realpath(dir.c_str(), buf) != nullptr) dir = buf;
  return dir;
}

void write_manifest(const std::string& dir, const StudyConfig& c, const std::string& shard, int total, int in_shard,
                    const std::string& command) {
  JsonObjectWriter j;
  j.add("name", c.name);
  j.add("config_hash", c.hash);
  j.add("config_dir", config_dir(c));
  j.add("shard", shard);
  j.add("cases_total", total);
  j.add("cases_in_shard", in_shard);
  j.add("producer", producer_string());
  j.add("created_utc", Provenance::utc_timestamp());
  j.add("command", command);
  j.add("research_use", kResearchUseLine);
  write_text_atomic(dir + "/manifest.json", j.str_lines() + "\n");
}

// Appends one row; a write cut short (disk full) is cut back off, so the
// file never ends in a partial row. False (errno set) on failure.
bool append_row(int fd, const std::string& line) {
  const off_t end = ::lseek(fd, 0, SEEK_END);
  size_t done = 0;
  while (done < line.size()) {
    const ssize_t n = ::write(fd, line.data() + done, line.size() - done);
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) {
      const int err = n < 0 ? errno : ENOSPC;
      const int cut = end >= 0 ? ::ftruncate(fd, end) : 0;  // a failed cut: the next run drops the row
      (void)cut;
      errno = err;
      return false;
    }
    done += size_t(n);
  }
  return true;
}

ImageRecord record_of(const ImageF& img, const std::string& description) {
  ImageRecord r;
  r.pixels = NdArray<cfloat>(Shape{img.rows(), img.cols()});
  for (Index k = 0; k < img.size(); ++k) r.pixels.data[size_t(k)] = cfloat(img.data()[k], 0.0f);
  r.description = description;
  return r;
}

// Rows sorted in canonical case order (cases not in the grid go last, by key).
void sort_canonical(ResultsTable& t, const CaseGrid& grid) {
  std::map<std::string, int> order;
  for (const StudyCase& c : grid.cases) order[c.key] = c.index;
  const int kc = t.column("case");
  std::stable_sort(t.rows.begin(), t.rows.end(), [&](const auto& a, const auto& b) {
    const auto ia = order.find(a[size_t(kc)]), ib = order.find(b[size_t(kc)]);
    const int oa = ia == order.end() ? 1 << 30 : ia->second, ob = ib == order.end() ? 1 << 30 : ib->second;
    if (oa != ob) return oa < ob;
    return a[size_t(kc)] < b[size_t(kc)];
  });
}

void finish_outputs(const std::string& dir, const StudyConfig& config, const CaseGrid& grid, ResultsTable& table,
                    const LearnedModelSet* learned, StudyRunSummary& s) {
  sort_canonical(table, grid);
  write_text_atomic(dir + "/results.csv", results_text(table));
  const std::vector<SummaryRow> summary = summarize(table);
  write_text_atomic(dir + "/summary.csv", summary_csv(summary));
  s.summary_path = dir + "/summary.csv";
  const std::vector<ComparisonRow> comparisons = compare_methods(summary, config.metrics);
  write_text_atomic(dir + "/comparisons.csv", comparisons_csv(comparisons));
  ReportInputs in;
  in.dir = dir;
  in.config = &config;
  in.grid = &grid;
  in.results = &table;
  in.summary = &summary;
  in.comparisons = &comparisons;
  in.learned = learned;
  s.report_path = write_study_report(in);
}

}  // namespace

std::vector<std::string> StudyRunOptions::validate() const {
  std::vector<std::string> e;
  if (out_dir.empty()) e.push_back("out_dir is empty");
  if (jobs < 1) e.push_back("jobs = " + std::to_string(jobs) + "; must be >= 1");
  if (threads_per_job < 0) e.push_back("threads_per_job = " + std::to_string(threads_per_job) + "; must be >= 0");
  return e;
}

StudyRunSummary run_study(const StudyConfig& config, const StudyRunOptions& options) {
  const auto t0 = std::chrono::steady_clock::now();
  {
    const auto errors = options.validate();
    if (!errors.empty()) throw InputError("", errors[0].substr(0, errors[0].find(' ')), errors[0]);
  }
  const std::string dir = options.out_dir;
  if (!is_dir(parent_of(dir))) throw InputError("", "out_dir", "the folder '" + parent_of(dir) + "' does not exist");
  const CaseGrid grid = expand_grid(config);
  std::vector<const StudyCase*> mine;
  for (const StudyCase& c : grid.cases)
    if (options.shard.contains(c)) mine.push_back(&c);
  StudyRunSummary s;
  s.cases_total = int(grid.cases.size());
  s.cases_in_shard = int(mine.size());
  if (grid.cases.empty()) throw InputError(config.file, "method", "empty grid: no case to run");

  // The folder is created here and held (folder_lock.h) for the whole run, so
  // two runs into one folder cannot both write it. A folder this run created
  // is removed again when the run refuses its input.
  const bool created_dir = !is_dir(dir);
  make_dir(dir);
  std::optional<StudyFolderLock> folder_lock;
  const std::string manifest = dir + "/manifest.json";
  LearnedModelSet learned;
  try {
    if (options.lock) folder_lock.emplace(dir, options.command);
    // An existing folder must hold this config and this shard (a merged
    // folder holds the whole study, like shard 1/1).
    if (file_exists(manifest)) {
      const ManifestKeys keys = read_manifest(manifest);
      const std::string& hash = keys.config_hash;
      const std::string& shard = keys.shard;
      if (hash != config.hash)
        throw InputError(manifest, "config_hash",
                         "the folder holds results of a different config (" + hash + ", this config " +
                             config.hash + "); choose another output folder");
      const bool whole = options.shard.count == 1;
      if (shard != options.shard.to_string() && !(whole && shard == "merged"))
        throw InputError(manifest, "shard",
                         "the folder holds shard " + shard + ", not " + options.shard.to_string() +
                             "; choose another output folder");
    }
    const auto train_start = std::chrono::steady_clock::now();
    ProgressSink* training = options.training_progress ? options.training_progress : options.progress;
    learned.prepare(config, dir, training, options.stop);
    s.training_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - train_start).count();
  } catch (const InputError&) {
    if (created_dir) {
      folder_lock.reset();
      ::rmdir(dir.c_str());  // only when still empty
    }
    throw;
  }

  make_dir(dir + "/images");
  if (config.keep_all) make_dir(dir + "/measurements");
  write_text_atomic(dir + "/study.toml", config.text);
  if (!file_exists(manifest))
    write_manifest(dir, config, options.shard.to_string(), s.cases_total, s.cases_in_shard, options.command);

  // Rows already there.
  const std::string results_path = dir + "/results.csv";
  s.results_path = results_path;
  std::set<std::string> done;
  if (file_exists(results_path)) {
    // A cut-off last row is dropped, and cases whose outputs could not be
    // written (disk full, permission) are run again: only their input decides
    // a case's failure for good.
    ResultsTable t = read_results(results_path);
    const size_t before = t.rows.size();
    const int ke = t.column("error");
    t.rows.erase(std::remove_if(t.rows.begin(), t.rows.end(),
                                [&](const auto& r) { return is_output_failure(r[size_t(ke)]); }),
                 t.rows.end());
    s.cases_retried = int(before - t.rows.size());
    if (t.had_partial_line || s.cases_retried > 0) write_text_atomic(results_path, results_text(t));
    const int kc = t.column("case");
    for (const auto& r : t.rows) done.insert(r[size_t(kc)]);
  } else {
    write_text_atomic(results_path, result_header() + "\n");
  }

  // Pending cases grouped by measurement.
  std::map<int, std::vector<const StudyCase*>> groups;
  for (const StudyCase* c : mine) {
    if (done.count(c->key)) {
      ++s.cases_skipped;
      continue;
    }
    groups[c->group].push_back(c);
  }
  std::vector<std::vector<const StudyCase*>> tasks;
  for (auto& [g, cs] : groups) tasks.push_back(std::move(cs));

  const int fd = ::open(results_path.c_str(), O_WRONLY | O_APPEND);
  if (fd < 0) throw WorkError("cannot open '" + results_path + "' for appending");
  std::mutex mutex;
  size_t next_task = 0;
  int finished = s.cases_skipped;
  const int jobs = std::max(1, std::min<int>(options.jobs, int(tasks.size())));
  const int threads = options.threads_per_job > 0 ? options.threads_per_job
                                                  : std::max(1, omp_get_max_threads() / std::max(1, options.jobs));
  if (options.jobs > 1 || options.threads_per_job > 0) set_fft_threads(threads);
  std::string write_error;

  auto worker = [&]() {
    omp_set_num_threads(threads);
    for (;;) {
      std::vector<const StudyCase*> task;
      {
        std::lock_guard<std::mutex> lock(mutex);
        if (next_task >= tasks.size() || (options.stop && options.stop->load()) || !write_error.empty()) return;
        task = tasks[next_task++];
      }
      const StudyCase& first = *task.front();
      const bool keep_images = first.phantom == 0 && first.repetition == 0;
      CaseMeasurement data;
      std::string sim_error;
      try {
        data = simulate_case_measurement(config, config.phantoms[size_t(first.phantom)],
                                         grid.acquisitions[size_t(first.acquisition)], first.mask_seed,
                                         first.noise_seed);
      } catch (const std::exception& e) {
        sim_error = std::string("simulation failed: ") + e.what();
      }
      std::string measurement_file;
      if (sim_error.empty() && config.keep_all) {
        try {
          const std::string rel = kept_measurement_file(first.measurement_key);
          write_measurement_file(dir + "/" + rel, data.measurement);
          measurement_file = rel;  // named in the rows only once written
        } catch (const std::exception& e) {
          sim_error = output_failure("writing the measurement: " + std::string(e.what()));
        }
      }
      if (sim_error.empty() && keep_images) {
        try {
          write_image_file(study_image_path(dir, "truth|" + first.measurement_key),
                           record_of(data.truth, "truth of " + first.measurement_key), Provenance{});
        } catch (const std::exception& e) {
          sim_error = output_failure("writing the truth image: " + std::string(e.what()));
        }
      }
      for (const StudyCase* c : task) {
        {
          std::lock_guard<std::mutex> lock(mutex);
          if (!write_error.empty()) return;
        }
        CaseOutcome o;
        if (sim_error.empty()) {
          o = run_case_method(config.methods[size_t(c->method)], data, &learned);
          if (o.ok && keep_images) {
            try {
              write_image_file(study_image_path(dir, c->key), record_of(o.image, "reconstruction of " + c->key),
                               Provenance{});
            } catch (const std::exception& e) {
              o.ok = false;
              o.error = output_failure("writing the montage image: " + std::string(e.what()));
            }
          }
          if (o.ok && config.keep_all) {
            try {
              o.image_file = kept_image_file(c->key);
              write_image_file(dir + "/" + o.image_file, o.record, Provenance{});
            } catch (const std::exception& e) {
              o.ok = false;
              o.image_file.clear();
              o.error = output_failure("writing the kept image: " + std::string(e.what()));
            }
          }
        } else {
          o.error = sim_error;
        }
        o.measurement_file = measurement_file;  // kept also when the method failed on it
        const std::string line = format_result_row(config, grid, *c, o) + "\n";
        std::lock_guard<std::mutex> lock(mutex);
        if (!append_row(fd, line)) {
          write_error = "writing '" + results_path + "' failed: " + std::strerror(errno);
          return;
        }
        ++s.cases_run;
        if (!o.ok) ++s.cases_failed;
        s.case_seconds += o.seconds;
        ++finished;
        if (options.progress) options.progress->update(finished, s.cases_in_shard, c->key);
      }
    }
  };
  std::vector<std::thread> pool;
  for (int j = 1; j < jobs; ++j) pool.emplace_back(worker);
  worker();
  for (auto& t : pool) t.join();
  ::close(fd);
  if (!write_error.empty()) throw WorkError(write_error);

  ResultsTable table = read_results(results_path);
  std::set<std::string> have, failed;
  for (const auto& r : table.rows) {
    have.insert(r[size_t(table.column("case"))]);
    if (!r[size_t(table.column("error"))].empty()) failed.insert(r[size_t(table.column("case"))]);
  }
  s.complete = true;
  for (const StudyCase* c : mine) {
    s.complete = s.complete && have.count(c->key) > 0;
    s.cases_failed_all += failed.count(c->key) > 0 ? 1 : 0;
  }
  if (s.complete && options.write_report) finish_outputs(dir, config, grid, table, &learned, s);
  if (options.progress) options.progress->finish(s.complete ? "study complete" : "study incomplete");
  s.wall_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return s;
}

StudyRunSummary merge_studies(const std::vector<std::string>& dirs, const std::string& out_dir,
                              const std::string& command) {
  const auto t0 = std::chrono::steady_clock::now();
  if (dirs.size() < 2) throw InputError("", "merge", "give at least two study folders to merge");
  if (!is_dir(parent_of(out_dir))) throw InputError("", "out_dir", "the folder '" + parent_of(out_dir) + "' does not exist");
  std::string hash, config_text, cdir;
  ResultsTable merged;
  std::map<std::string, std::string> owner;
  for (const std::string& d : dirs) {
    const std::string manifest = d + "/manifest.json";
    if (!file_exists(manifest)) throw InputError(d, "manifest.json", "missing: not a study folder");
    const ManifestKeys keys = read_manifest(manifest);
    const std::string& h = keys.config_hash;
    if (hash.empty()) {
      hash = h;
      config_text = read_text_file(d + "/study.toml");
      cdir = keys.config_dir;
    } else if (h != hash) {
      throw InputError(manifest, "config_hash",
                       "shard of a different config (" + h + ", first folder " + hash + "); refusing to merge");
    }
    ResultsTable t = read_results(d + "/results.csv");
    if (merged.columns.empty()) merged.columns = t.columns;
    const int kc = t.column("case");
    for (auto& r : t.rows) {
      const std::string& key = r[size_t(kc)];
      const auto it = owner.find(key);
      if (it != owner.end())
        throw InputError(d + "/results.csv", "case",
                         "case '" + key + "' is also in " + it->second + "; shards overlap, refusing to merge");
      owner[key] = d;
      merged.rows.push_back(r);
    }
  }
  if (out_dir == dirs.front() || std::find(dirs.begin(), dirs.end(), out_dir) != dirs.end())
    throw InputError("", "out_dir", "'" + out_dir + "' is one of the folders being merged; choose a new one");
  // The config (its relative paths resolve against its original folder).
  StudyConfig config = StudyConfig::parse(config_text, cdir + "/study.toml", cdir);
  config.file = cdir + "/study.toml";
  if (config.hash != hash)
    throw InputError(dirs.front() + "/study.toml", "config_hash",
                     "the config or a file it names changed since the shards ran (" + config.hash + " now, " + hash +
                         " then)");
  const CaseGrid grid = expand_grid(config);
  for (const std::string& d : dirs)
    if (StudyFolderLock::held_by_other(d))
      throw InputError(d + "/" + study_lock_file_name(), "",
                       "the shard is still being run by " + StudyFolderLock::describe_holder(
                                                                 d + "/" + study_lock_file_name()) +
                           "; merge when it has finished");

  make_dir(out_dir);
  const StudyFolderLock out_lock(out_dir, command);
  make_dir(out_dir + "/images");
  write_text_atomic(out_dir + "/study.toml", config_text);
  StudyRunSummary s;
  s.cases_total = int(grid.cases.size());
  s.cases_in_shard = s.cases_total;
  s.cases_skipped = int(merged.rows.size());
  // Montage images from every shard.
  for (const std::string& d : dirs)
    for (const StudyCase& c : grid.cases) {
      if (c.phantom != 0 || c.repetition != 0) continue;
      for (const std::string& key : {c.key, "truth|" + c.measurement_key}) {
        const std::string from = study_image_path(d, key), to = study_image_path(out_dir, key);
        if (file_exists(from) && !file_exists(to)) write_text_atomic(to, read_text_file(from));
      }
    }
  // keep = "all": the files each shard's rows name.
  if (config.keep_all) {
    make_dir(out_dir + "/measurements");
    const int kf = merged.column("measurement_file"), ki = merged.column("image_file"),
              kc = merged.column("case");
    for (size_t r = 0; r < merged.rows.size(); ++r)
      for (int k : {kf, ki}) {
        const std::string& rel = merged.rows[r][size_t(k)];
        if (rel.empty() || file_exists(out_dir + "/" + rel)) continue;
        write_text_atomic(out_dir + "/" + rel, read_text_file(owner.at(merged.rows[r][size_t(kc)]) + "/" + rel));
      }
  }
  write_manifest(out_dir, config, "merged", s.cases_total, s.cases_total, command);
  std::set<std::string> have;
  for (const auto& r : merged.rows) have.insert(r[size_t(merged.column("case"))]);
  s.complete = true;
  for (const StudyCase& c : grid.cases) s.complete = s.complete && have.count(c.key) > 0;
  s.results_path = out_dir + "/results.csv";
  finish_outputs(out_dir, config, grid, merged, nullptr, s);
  s.wall_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return s;
}

}  // namespace recofold
