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
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <functional>
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
#include "recofold/study/mpi_dispatch.h"
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
  std::string config_hash, shard, config_dir, name;
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
  m.name = text("name", false);
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

// A montage image (truth or a scored reconstruction) on the measurement's pixel grid.
ImageRecord record_of(const ImageF& img, const std::string& description, const Measurement& m) {
  ImageRecord r;
  r.pixels = NdArray<cfloat>(Shape{img.rows(), img.cols()});
  for (Index k = 0; k < img.size(); ++k) r.pixels.data[size_t(k)] = cfloat(img.data()[k], 0.0f);
  r.description = description;
  r.pixel_spacing_mm[0] = m.pixel_spacing_mm[0];
  r.pixel_spacing_mm[1] = m.pixel_spacing_mm[1];
  return r;
}

// The attributes that say which study case an image belongs to: the study
// method's name and the spec's method, prior and lambda attributes (those of
// the reconstruction record, which `recofold recon` writes too).
void add_case_attrs(ImageRecord& img, const StudyMethod& method, Modality modality, const StudyCase& c,
                    const CaseOutcome& o) {
  for (const auto& [k, v] : o.record.text_attrs) img.text_attrs.emplace(k, v);
  for (const auto& [k, v] : o.record.number_attrs) img.number_attrs.emplace(k, v);
  img.text_attrs["study_method"] = method.name;
  img.text_attrs["study_case"] = c.key;
  if (!img.text_attrs.count("method")) img.text_attrs["method"] = method.method_name();
  if (!img.text_attrs.count("prior")) img.text_attrs["prior"] = method.prior_name(modality);
  if (std::isfinite(o.lambda)) img.number_attrs["lambda"] = o.lambda;
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

// ---------------------------------------------------------------- the steps of a run
// run_study runs them in order; an MPI job (run_study_rank0 / serve_study)
// runs the same steps, rank 0 the folder steps and every rank the cases.

// One run's state, filled in by the steps.
struct StudyRun {
  StudyRun(const StudyConfig& c, const StudyRunOptions& o) : config(c), options(o) {}
  const StudyConfig& config;
  const StudyRunOptions& options;
  std::string dir, results_path;
  CaseGrid grid;
  std::vector<const StudyCase*> mine;                // the cases of this shard
  std::vector<std::vector<const StudyCase*>> tasks;  // pending cases, one task per measurement
  LearnedModelSet learned;
  std::optional<StudyFolderLock> folder_lock;
  bool created_dir = false;
  StudyRunSummary s;
};

// Step 1: checks the options and expands the grid; writes nothing.
void select_cases(StudyRun& r) {
  const auto errors = r.options.validate();
  if (!errors.empty()) throw InputError("", errors[0].substr(0, errors[0].find(' ')), errors[0]);
  r.dir = r.options.out_dir;
  r.results_path = r.dir + "/results.csv";
  if (!is_dir(parent_of(r.dir)))
    throw InputError("", "out_dir", "the folder '" + parent_of(r.dir) + "' does not exist");
  r.grid = expand_grid(r.config);
  for (const StudyCase& c : r.grid.cases)
    if (r.options.shard.contains(c)) r.mine.push_back(&c);
  r.s.cases_total = int(r.grid.cases.size());
  r.s.cases_in_shard = int(r.mine.size());
  if (r.grid.cases.empty()) throw InputError(r.config.file, "method", "empty grid: no case to run");
}

// Removes the folder again when this run created it and refuses its input.
void undo_created_folder(StudyRun& r) {
  if (!r.created_dir) return;
  r.folder_lock.reset();
  ::rmdir(r.dir.c_str());  // only when still empty
}

// Step 2: creates the folder and holds its lock (folder_lock.h) for the whole
// run, so two runs into one folder cannot both write it. An existing folder
// must hold this config and this shard (a merged folder holds the whole
// study, like shard 1/1).
void open_folder(StudyRun& r) {
  r.created_dir = !is_dir(r.dir);
  make_dir(r.dir);
  const std::string manifest = r.dir + "/manifest.json";
  try {
    if (r.options.lock) r.folder_lock.emplace(r.dir, r.options.command);
    if (!file_exists(manifest)) return;
    const ManifestKeys keys = read_manifest(manifest);
    if (keys.config_hash != r.config.hash)
      throw InputError(manifest, "config_hash",
                       "the folder holds results of a different config (" + keys.config_hash + ", this config " +
                           r.config.hash + "); choose another output folder");
    const bool whole = r.options.shard.count == 1;
    if (keys.shard != r.options.shard.to_string() && !(whole && keys.shard == "merged"))
      throw InputError(manifest, "shard",
                       "the folder holds shard " + keys.shard + ", not " + r.options.shard.to_string() +
                           "; choose another output folder");
  } catch (const InputError&) {
    undo_created_folder(r);
    throw;
  }
}

// Step 3: checks model files and trains the study's [train] methods.
void prepare_models(StudyRun& r) {
  const auto start = std::chrono::steady_clock::now();
  ProgressSink* training = r.options.training_progress ? r.options.training_progress : r.options.progress;
  try {
    r.learned.prepare(r.config, r.dir, training, r.options.stop);
  } catch (const InputError&) {
    undo_created_folder(r);
    throw;
  }
  r.s.training_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

// Step 4: the folder's fixed files.
void write_folder_files(StudyRun& r) {
  make_dir(r.dir + "/images");
  if (r.config.keep_all) make_dir(r.dir + "/measurements");
  write_text_atomic(r.dir + "/study.toml", r.config.text);
  if (!file_exists(r.dir + "/manifest.json"))
    write_manifest(r.dir, r.config, r.options.shard.to_string(), r.s.cases_total, r.s.cases_in_shard,
                   r.options.command);
}

// Step 5: the rows already there and the tasks still to run (grouped by
// measurement). A cut-off last row is dropped, and cases whose outputs could
// not be written (disk full, permission) are run again: only their input
// decides a case's failure for good.
void plan_pending(StudyRun& r) {
  r.s.results_path = r.results_path;
  std::set<std::string> done;
  if (file_exists(r.results_path)) {
    ResultsTable t = read_results(r.results_path);
    const size_t before = t.rows.size();
    const int ke = t.column("error");
    t.rows.erase(std::remove_if(t.rows.begin(), t.rows.end(),
                                [&](const auto& row) { return is_output_failure(row[size_t(ke)]); }),
                 t.rows.end());
    r.s.cases_retried = int(before - t.rows.size());
    if (t.had_partial_line || r.s.cases_retried > 0) write_text_atomic(r.results_path, results_text(t));
    const int kc = t.column("case");
    for (const auto& row : t.rows) done.insert(row[size_t(kc)]);
  } else {
    write_text_atomic(r.results_path, result_header() + "\n");
  }
  std::map<int, std::vector<const StudyCase*>> groups;
  for (const StudyCase* c : r.mine) {
    if (done.count(c->key)) {
      ++r.s.cases_skipped;
      continue;
    }
    groups[c->group].push_back(c);
  }
  for (auto& [g, cs] : groups) r.tasks.push_back(std::move(cs));
}

// Where a finished case's row goes; false: stop the task.
using RowSink = std::function<bool(const StudyCase&, const CaseOutcome&, const std::string& row)>;

// The measurement of a task, simulated once for all its cases, and the files
// kept of it; `error` set when either failed.
struct TaskMeasurement {
  CaseMeasurement data;
  std::string error, measurement_file;
};

// Provenance of a study's image files: the study command, the config hash,
// the case (or measurement) key and its seeds.
Provenance image_provenance(const StudyRun& r, const std::string& key, const StudyCase& c) {
  Provenance p;
  p.command = r.options.command.empty() ? "recofold study --config " + r.config.file : r.options.command;
  p.extra["study_config_hash"] = r.config.hash;
  p.extra["study_key"] = key;
  p.extra["mask_seed"] = std::to_string(c.mask_seed);
  p.extra["noise_seed"] = std::to_string(c.noise_seed);
  return p;
}

TaskMeasurement simulate_task(const StudyRun& r, const StudyCase& first, bool keep_images) {
  TaskMeasurement t;
  try {
    t.data = simulate_case_measurement(r.config, r.config.phantoms[size_t(first.phantom)],
                                       r.grid.acquisitions[size_t(first.acquisition)], first.mask_seed,
                                       first.noise_seed);
  } catch (const std::exception& e) {
    t.error = std::string("simulation failed: ") + e.what();
    return t;
  }
  if (r.config.keep_all) {
    try {
      const std::string rel = kept_measurement_file(first.measurement_key);
      write_measurement_file(r.dir + "/" + rel, t.data.measurement);
      t.measurement_file = rel;  // named in the rows only once written
    } catch (const std::exception& e) {
      t.error = output_failure("writing the measurement: " + std::string(e.what()));
      return t;
    }
  }
  if (keep_images) {
    try {
      ImageRecord truth = record_of(t.data.truth, "truth of " + first.measurement_key, t.data.measurement);
      truth.text_attrs["study_measurement"] = first.measurement_key;
      write_image_file(study_image_path(r.dir, "truth|" + first.measurement_key), truth,
                       image_provenance(r, first.measurement_key, first));
    } catch (const std::exception& e) {
      t.error = output_failure("writing the truth image: " + std::string(e.what()));
    }
  }
  return t;
}

// One case on a simulated measurement, with the images it keeps.
CaseOutcome run_one_case(const StudyRun& r, const StudyCase& c, const TaskMeasurement& m, bool keep_images) {
  CaseOutcome o;
  if (!m.error.empty()) {
    o.error = m.error;
  } else {
    const StudyMethod& method = r.config.methods[size_t(c.method)];
    o = run_case_method(method, m.data, &r.learned);
    if (o.ok && method.learned()) {
      // The object's family and the image size, which the model's own check does not see.
      const std::string more = r.learned.object_outside(method.name, r.config.phantoms[size_t(c.phantom)],
                                                        r.config.ny, r.config.nx);
      if (!more.empty()) {
        o.outside += (o.outside.empty() ? "" : "; ") + more;
        o.in_training = "no";
      }
    }
    if (o.ok && keep_images) {
      try {
        ImageRecord img = record_of(o.image, "reconstruction of " + c.key, m.data.measurement);
        add_case_attrs(img, method, m.data.measurement.modality, c, o);
        write_image_file(study_image_path(r.dir, c.key), img, image_provenance(r, c.key, c));
      } catch (const std::exception& e) {
        o.ok = false;
        o.error = output_failure("writing the montage image: " + std::string(e.what()));
      }
    }
    if (o.ok && r.config.keep_all) {
      try {
        o.image_file = kept_image_file(c.key);
        ImageRecord kept = o.record;
        add_case_attrs(kept, method, m.data.measurement.modality, c, o);
        write_image_file(r.dir + "/" + o.image_file, kept, image_provenance(r, c.key, c));
      } catch (const std::exception& e) {
        o.ok = false;
        o.image_file.clear();
        o.error = output_failure("writing the kept image: " + std::string(e.what()));
      }
    }
  }
  o.measurement_file = m.measurement_file;  // kept also when the method failed on it
  return o;
}

// Step 6, the case runner: the cases of one task, each row to `sink`.
void run_task(const StudyRun& r, const std::vector<const StudyCase*>& task, const RowSink& sink) {
  const StudyCase& first = *task.front();
  const bool keep_images = first.phantom == 0 && first.repetition == 0;
  const TaskMeasurement m = simulate_task(r, first, keep_images);
  for (const StudyCase* c : task) {
    const CaseOutcome o = run_one_case(r, *c, m, keep_images);
    if (!sink(*c, o, format_result_row(r.config, r.grid, *c, o) + "\n")) return;
  }
}

// Appends finished rows to results.csv (the only writer of it), counts them
// and reports progress. Safe to call from several threads.
class RowWriter {
 public:
  explicit RowWriter(StudyRun& r) : r_(r), finished_(r.s.cases_skipped) {
    fd_ = ::open(r.results_path.c_str(), O_WRONLY | O_APPEND);
    if (fd_ < 0) throw WorkError("cannot open '" + r.results_path + "' for appending");
  }
  ~RowWriter() { ::close(fd_); }
  RowWriter(const RowWriter&) = delete;
  RowWriter& operator=(const RowWriter&) = delete;

  // False (and nothing counted) once a write has failed.
  bool write(const StudyCase& c, bool ok, double seconds, const std::string& row) {
    std::lock_guard<std::mutex> lock(mutex_);
    if (!error_.empty()) return false;
    if (!append_row(fd_, row)) {
      error_ = "writing '" + r_.results_path + "' failed: " + std::strerror(errno);
      return false;
    }
    ++r_.s.cases_run;
    if (!ok) ++r_.s.cases_failed;
    r_.s.case_seconds += seconds;
    ++finished_;
    if (r_.options.progress) r_.options.progress->update(finished_, r_.s.cases_in_shard, c.key);
    return true;
  }
  bool failed() {
    std::lock_guard<std::mutex> lock(mutex_);
    return !error_.empty();
  }
  void throw_if_failed() {
    if (failed()) throw WorkError(error_);
  }

 private:
  StudyRun& r_;
  std::mutex mutex_;
  int fd_ = -1;
  int finished_ = 0;
  std::string error_;
};

// The pending tasks handed out one at a time, to threads and ranks alike.
class TaskQueue {
 public:
  TaskQueue(const StudyRun& r, RowWriter& w) : r_(r), w_(w) {}
  // The next task's index; false when none is left, a stop was asked for or
  // results.csv could not be written.
  bool next(size_t& index) {
    std::lock_guard<std::mutex> lock(mutex_);
    if (closed_ || next_ >= r_.tasks.size() || (r_.options.stop && r_.options.stop->load()) || w_.failed())
      return false;
    index = next_++;
    return true;
  }
  // Hands out nothing more.
  void close() {
    std::lock_guard<std::mutex> lock(mutex_);
    closed_ = true;
  }

 private:
  const StudyRun& r_;
  RowWriter& w_;
  std::mutex mutex_;
  size_t next_ = 0;
  bool closed_ = false;
};

// Runs tasks from the queue on this thread until it is empty.
void work_from_queue(const StudyRun& r, RowWriter& w, TaskQueue& q, int threads) {
  omp_set_num_threads(threads);
  size_t i = 0;
  while (q.next(i))
    run_task(r, r.tasks[i], [&](const StudyCase& c, const CaseOutcome& o, const std::string& row) {
      return w.write(c, o.ok, o.seconds, row);
    });
}

// Step 7: the pending tasks on `options.jobs` threads of this process.
void run_tasks_locally(StudyRun& r) {
  RowWriter w(r);
  TaskQueue q(r, w);
  const StudyRunOptions& o = r.options;
  const int jobs = std::max(1, std::min<int>(o.jobs, int(r.tasks.size())));
  const int threads = o.threads_per_job > 0 ? o.threads_per_job
                                            : std::max(1, omp_get_max_threads() / std::max(1, o.jobs));
  if (o.jobs > 1 || o.threads_per_job > 0) set_fft_threads(threads);
  std::vector<std::thread> pool;
  for (int j = 1; j < jobs; ++j) pool.emplace_back([&] { work_from_queue(r, w, q, threads); });
  work_from_queue(r, w, q, threads);
  for (auto& t : pool) t.join();
  w.throw_if_failed();
}

// Step 8: completeness from results.csv; the final outputs when complete.
void finish_run(StudyRun& r) {
  ResultsTable table = read_results(r.results_path);
  std::set<std::string> have, failed;
  for (const auto& row : table.rows) {
    have.insert(row[size_t(table.column("case"))]);
    if (!row[size_t(table.column("error"))].empty()) failed.insert(row[size_t(table.column("case"))]);
  }
  r.s.complete = true;
  for (const StudyCase* c : r.mine) {
    r.s.complete = r.s.complete && have.count(c->key) > 0;
    r.s.cases_failed_all += failed.count(c->key) > 0 ? 1 : 0;
  }
  if (r.s.complete && r.options.write_report) finish_outputs(r.dir, r.config, r.grid, table, &r.learned, r.s);
  if (r.options.progress) r.options.progress->finish(r.s.complete ? "study complete" : "study incomplete");
}

// ---------------------------------------------------------------- an MPI job (mpi_dispatch.h)
// Rank 0 runs the folder steps, hands tasks out one at a time (a work queue:
// slow methods do not hold up the others) and alone writes results.csv and
// the final outputs; every rank, rank 0 included (on a second thread), runs
// tasks with the same case runner. Messages:
//   kStart  0 -> k  "go\n<probe file>\n<token>"  or  "fail\n<code>\n<message>"
//   kReply  k -> 0  "ok"  or  "error\n<code>\n<field>\n<message>"  (probe seen, own checks)
//   kBegin  0 -> k  "go"  or  "fail\n<code>\n<message>"  (models ready, cases planned)
//   kReady  k -> 0  "": send a task
//   kTask   0 -> k  the task's case indices "3,4,5"; "": no task left
//   kRow    k -> 0  "<case index>\n<ok 0|1>\n<seconds>\n<row>"
//   kLeave  k -> 0  "": stopped by a signal, takes no more tasks
enum MpiTag { kStart = 11, kReply, kBegin, kReady, kTask, kRow, kLeave };

std::vector<std::string> split_message(const std::string& text, size_t parts) {
  std::vector<std::string> out;
  size_t at = 0;
  while (out.size() + 1 < parts) {
    const size_t nl = text.find('\n', at);
    if (nl == std::string::npos) break;
    out.push_back(text.substr(at, nl - at));
    at = nl + 1;
  }
  out.push_back(text.substr(std::min(at, text.size())));
  return out;
}

int exit_code_of(const std::exception& e) { return dynamic_cast<const InputError*>(&e) ? 2 : 1; }

std::string failure_message(int code, const std::string& what) { return "fail\n" + std::to_string(code) + "\n" + what; }

// The lines of a "go" message; ReportedByRankZero for "fail".
std::vector<std::string> expect_go(const StudyMessenger::Message& m) {
  const std::vector<std::string> p = split_message(m.text, 3);
  if (p[0] == "go") return p;
  const int code = p.size() > 1 ? std::atoi(p[1].c_str()) : 1;
  throw ReportedByRankZero(code > 0 ? code : 1, p.size() > 2 ? p[2] : "rank 0 stopped the study");
}

void tell_workers(StudyMessenger& m, int tag, const std::string& text) {
  for (int k = 1; k < m.size(); ++k) m.send(k, tag, text);
}

// Rank 0: writes a probe file into the folder; every other rank must read it
// back, else the folder is not shared and the job is refused.
void check_shared_folder(const StudyRun& r, StudyMessenger& m, bool& started) {
  const std::string token = std::to_string(::getpid()) + "-" +
                            std::to_string(std::chrono::steady_clock::now().time_since_epoch().count());
  const std::string probe = r.dir + "/.rank0-probe-" + token;
  write_text_atomic(probe, token);
  tell_workers(m, kStart, "go\n" + probe + "\n" + token);
  started = true;
  int code = 0;
  std::string field, problem;
  for (int k = 1; k < m.size(); ++k) {
    const std::vector<std::string> p = split_message(m.wait(k).text, 4);
    if (p[0] != "ok" && problem.empty() && p.size() == 4) {
      code = std::atoi(p[1].c_str());
      field = p[2];
      problem = "rank " + std::to_string(k) + ": " + p[3];
    }
  }
  ::unlink(probe.c_str());
  if (problem.empty()) return;
  if (code == 2) throw InputError("", field, problem);
  throw WorkError(problem);
}

// Another rank's answer to kStart: its own checks, then the probe file.
std::string probe_reply(const StudyRun& r, const std::vector<std::string>& start, const std::string& own_problem,
                        int own_code) {
  if (!own_problem.empty()) return "error\n" + std::to_string(own_code) + "\n\n" + own_problem;
  std::string seen;
  try {
    seen = read_text_file(start.size() > 1 ? start[1] : "");
  } catch (const std::exception&) {
  }
  if (start.size() > 2 && seen == start[2]) return "ok";
  return "error\n2\nout_dir\nthe folder '" + r.dir +
         "' is not the one rank 0 writes (its probe file is not seen here): the output folder must be on a "
         "filesystem every rank shares";
}

void record_remote_row(StudyRun& r, RowWriter& w, const std::string& text) {
  const std::vector<std::string> p = split_message(text, 4);
  if (p.size() != 4) throw WorkError("MPI: malformed result message");
  const size_t index = size_t(std::atol(p[0].c_str()));
  if (index >= r.grid.cases.size()) throw WorkError("MPI: result message for an unknown case");
  w.write(r.grid.cases[index], p[1] == "1", std::atof(p[2].c_str()), p[3]);
}

std::string task_message(const std::vector<const StudyCase*>& task) {
  std::string s;
  for (const StudyCase* c : task) s += (s.empty() ? "" : ",") + std::to_string(c->index);
  return s;
}

// Rank 0's main thread: answers task requests and records rows until every
// other rank has taken its last "no task left" (or left on a signal).
void serve_requests(StudyRun& r, StudyMessenger& m, RowWriter& w, TaskQueue& q) {
  int active = m.size() - 1;
  StudyMessenger::Message msg;
  while (active > 0) {
    if (!m.poll(-1, msg)) {
      std::this_thread::sleep_for(std::chrono::microseconds(500));
      continue;
    }
    const auto t0 = std::chrono::steady_clock::now();
    size_t i = 0;
    if (msg.tag == kRow) {
      record_remote_row(r, w, msg.text);
    } else if (msg.tag == kReady && q.next(i)) {
      m.send(msg.from, kTask, task_message(r.tasks[i]));
    } else if (msg.tag == kReady) {
      m.send(msg.from, kTask, "");
      --active;
    } else if (msg.tag == kLeave) {
      --active;
    }
    r.s.dispatch_seconds += std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    ++r.s.dispatch_messages;
  }
}

// Rank 0, step 7: the queue served to the other ranks and to a local thread.
void dispatch_tasks(StudyRun& r, StudyMessenger& m) {
  RowWriter w(r);
  TaskQueue q(r, w);
  const int threads = std::max(1, r.options.threads_per_job);
  set_fft_threads(threads);
  m.workers_active = true;
  std::thread local([&] { work_from_queue(r, w, q, threads); });
  try {
    serve_requests(r, m, w, q);
  } catch (...) {
    q.close();
    local.join();
    throw;
  }
  local.join();
  m.workers_active = false;
  w.throw_if_failed();
}

StudyRunSummary run_study_rank0(const StudyConfig& config, const StudyRunOptions& options, StudyMessenger& m) {
  const auto t0 = std::chrono::steady_clock::now();
  StudyRun r(config, options);
  r.s.ranks = m.size();
  bool started = false;
  try {
    select_cases(r);
    open_folder(r);
    check_shared_folder(r, m, started);
    prepare_models(r);
    write_folder_files(r);
    plan_pending(r);
  } catch (const std::exception& e) {
    tell_workers(m, started ? kBegin : kStart, failure_message(exit_code_of(e), e.what()));
    if (exit_code_of(e) == 2) undo_created_folder(r);  // e.g. a folder not shared: nothing left behind
    throw;
  }
  tell_workers(m, kBegin, "go");
  dispatch_tasks(r, m);
  finish_run(r);
  r.s.wall_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return r.s;
}

// A rank other than 0: takes tasks from rank 0 and sends their rows back.
void take_tasks(StudyRun& r, StudyMessenger& m) {
  const int threads = std::max(1, r.options.threads_per_job);
  set_fft_threads(threads);
  omp_set_num_threads(threads);
  for (;;) {
    if (r.options.stop && r.options.stop->load()) {
      m.send(0, kLeave, "");
      return;
    }
    m.send(0, kReady, "");
    const std::string text = m.wait(0).text;
    if (text.empty()) return;
    std::vector<const StudyCase*> task;
    for (size_t at = 0; at < text.size();) {
      const size_t comma = std::min(text.find(',', at), text.size());
      task.push_back(&r.grid.cases.at(size_t(std::atol(text.substr(at, comma - at).c_str()))));
      at = comma + 1;
    }
    run_task(r, task, [&](const StudyCase& c, const CaseOutcome& o, const std::string& row) {
      char secs[32];
      std::snprintf(secs, sizeof secs, "%.9g", o.seconds);
      m.send(0, kRow, std::to_string(c.index) + "\n" + (o.ok ? "1" : "0") + "\n" + secs + "\n" + row);
      ++r.s.cases_run;
      r.s.cases_failed += o.ok ? 0 : 1;
      r.s.case_seconds += o.seconds;
      return true;
    });
  }
}

StudyRunSummary serve_study(const StudyConfig& config, const StudyRunOptions& options, StudyMessenger& m) {
  const auto t0 = std::chrono::steady_clock::now();
  StudyRun r(config, options);
  r.s.ranks = m.size();
  int code = 0;
  std::string problem;
  try {
    select_cases(r);
  } catch (const std::exception& e) {
    code = exit_code_of(e);
    problem = e.what();
  }
  const std::vector<std::string> start = expect_go(m.wait(0));
  m.send(0, kReply, probe_reply(r, start, problem, code));
  expect_go(m.wait(0));
  r.learned.prepare(config, r.dir, nullptr, options.stop);  // the models rank 0 checked or trained
  take_tasks(r, m);
  r.s.wall_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return r.s;
}

}  // namespace

StudyMessenger::Message StudyMessenger::wait(int from) {
  Message m;
  while (!poll(from, m)) std::this_thread::sleep_for(std::chrono::milliseconds(1));
  return m;
}

int mpi_launch_size() {
  for (const char* name : {"OMPI_COMM_WORLD_SIZE", "PMI_SIZE"}) {
    const char* v = std::getenv(name);
    if (v && *v) return std::max(1, std::atoi(v));
  }
  return 1;
}

#if !RECOFOLD_WITH_MPI
// This build has no MPI (CMake option RECOFOLD_WITH_MPI off): src/study/mpi_dispatch.cc is not compiled.
bool mpi_built() { return false; }
bool mpi_start(int*, char***) { return false; }
void mpi_stop() {}
void mpi_abort(int) {}
StudyMessenger* mpi_world() { return nullptr; }
#endif

void refuse_study_job(StudyMessenger& m, int exit_code, const std::string& message) {
  tell_workers(m, kStart, failure_message(exit_code, message));
}

void decline_study_job(StudyMessenger& m, int exit_code, const std::string& message) {
  expect_go(m.wait(0));  // rank 0 failed too: it reports
  m.send(0, kReply, "error\n" + std::to_string(exit_code) + "\n\n" + message);
  expect_go(m.wait(0));
  throw ReportedByRankZero(exit_code, message);
}

std::vector<std::string> StudyRunOptions::validate() const {
  std::vector<std::string> e;
  if (out_dir.empty()) e.push_back("out_dir is empty");
  if (jobs < 1) e.push_back("jobs = " + std::to_string(jobs) + "; must be >= 1");
  if (threads_per_job < 0) e.push_back("threads_per_job = " + std::to_string(threads_per_job) + "; must be >= 0");
  if (messenger && messenger->size() > 1 && jobs > 1)
    e.push_back("jobs = " + std::to_string(jobs) + "; must be 1 in an MPI job (every rank runs one case at a time)");
  return e;
}

StudyRunSummary run_study(const StudyConfig& config, const StudyRunOptions& options) {
  if (options.messenger && options.messenger->size() > 1)
    return options.messenger->rank() == 0 ? run_study_rank0(config, options, *options.messenger)
                                          : serve_study(config, options, *options.messenger);
  const auto t0 = std::chrono::steady_clock::now();
  StudyRun r(config, options);
  select_cases(r);
  open_folder(r);
  prepare_models(r);
  write_folder_files(r);
  plan_pending(r);
  run_tasks_locally(r);
  finish_run(r);
  r.s.wall_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return r.s;
}

// A merge may write into a new folder or into one that holds the same
// study (a full run, or an earlier merge): its rows are replaced by the
// merged ones and it stays resumable. A folder of another config is refused.
void check_merge_target(const std::string& out_dir, const std::string& hash) {
  const std::string manifest = out_dir + "/manifest.json";
  if (!file_exists(manifest)) {
    if (file_exists(out_dir + "/results.csv"))
      throw InputError(out_dir, "out_dir", "holds a results.csv but no manifest.json; choose a new folder to merge into");
    return;
  }
  const ManifestKeys keys = read_manifest(manifest);
  if (keys.config_hash != hash)
    throw InputError(manifest, "config_hash",
                     "the folder holds results of a different config (" + keys.config_hash + ", the shards " + hash +
                         "); choose another folder to merge into");
}

StudyRunSummary merge_studies(const std::vector<std::string>& dirs, const std::string& out_dir,
                              const std::string& command) {
  const auto t0 = std::chrono::steady_clock::now();
  if (dirs.size() < 2) throw InputError("", "merge", "give at least two study folders to merge");
  if (!is_dir(parent_of(out_dir))) throw InputError("", "out_dir", "the folder '" + parent_of(out_dir) + "' does not exist");
  std::string hash, config_text, cdir, name;
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
      name = keys.name;
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
  if (!name.empty()) config.name = name;  // a name from the config file's stem, not "study"
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

  check_merge_target(out_dir, hash);
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
