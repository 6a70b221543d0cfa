#include "icmscope/pipeline/survey_run.hpp"

#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <condition_variable>
#include <cstdio>
#include <ctime>
#include <filesystem>
#include <iostream>
#include <mutex>
#include <sstream>
#include <thread>

#ifdef _OPENMP
#include <omp.h>
#endif
#ifdef ICMSCOPE_WITH_MPI
#include <mpi.h>
#endif

#include "icmscope/core/errors.hpp"
#include "icmscope/core/version.hpp"
#include "icmscope/io/fits_keywords.hpp"
#include "icmscope/pipeline/project_run.hpp"
#include "icmscope/pipeline/survey_summary.hpp"

namespace icmscope::pipeline {

namespace fs = std::filesystem;
using clock_type = std::chrono::steady_clock;

bool survey_mpi_available() {
#ifdef ICMSCOPE_WITH_MPI
  return true;
#else
  return false;
#endif
}

int SurveyRunResult::exit_code() const {
  if (catalog_written) return failures.empty() ? 0 : 7;
  return failed_now == 0 ? 0 : 7;
}

namespace {

enum Outcome : long long { kOk = 0, kFailed = 1, kResumed = 2, kNone = -1 };

std::string hms(double s) {
  if (!std::isfinite(s) || s < 0) return "--:--";
  const long long t = static_cast<long long>(std::llround(s));
  char b[32];
  if (t >= 3600) std::snprintf(b, sizeof b, "%lld:%02lld:%02lld", t / 3600, (t / 60) % 60, t % 60);
  else std::snprintf(b, sizeof b, "%lld:%02lld", t / 60, t % 60);
  return b;
}

std::string stamp() {
  const std::time_t now = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&now, &tm);
  char b[32];
  std::strftime(b, sizeof b, "%Y%m%d-%H%M%S", &tm);
  return b;
}

std::string record_path(const SurveyTarget& t) { return (fs::path(t.directory) / "record.txt").string(); }

bool finished(const SurveyTarget& t) {
  const auto r = read_record(record_path(t));
  return r && r->ok && r->target_id == t.id && r->config_hash == t.config_hash;
}

// Removes temporary files a killed run may have left in a target folder.
void clean_temporaries(const std::string& dir) {
  std::error_code ec;
  if (!fs::is_directory(dir, ec)) return;
  for (const auto& e : fs::directory_iterator(dir, ec))
    if (e.path().filename().string().find(".tmp-") != std::string::npos) fs::remove(e.path(), ec);
}

// Progress shared by the workers (and, on MPI rank 0, the remote ranks).
struct Progress {
  std::mutex m;
  std::condition_variable cv;
  std::size_t total = 0;  // targets this run is responsible for
  std::size_t ok = 0, failed = 0, resumed = 0, running = 0;
  std::vector<std::string> messages;  // failure lines to print
  clock_type::time_point start = clock_type::now();
  void done(Outcome o, const std::string& msg) {
    std::lock_guard<std::mutex> g(m);
    if (o == kOk) ++ok;
    else if (o == kFailed) ++failed;
    else if (o == kResumed) ++resumed;
    if (!msg.empty()) messages.push_back(msg);
    cv.notify_all();
  }
  std::size_t finished() const { return ok + failed + resumed; }
};

class ProgressDisplay {
 public:
  ProgressDisplay(const std::string& mode, Log& log) : log_(log) {
    const bool tty = ::isatty(STDERR_FILENO) != 0;
    mode_ = mode == "auto" ? (tty ? "bar" : "lines") : mode;
  }
  // Call with p.m held.
  void update(Progress& p, bool final_call) {
    const auto now = clock_type::now();
    const double el = std::chrono::duration<double>(now - p.start).count();
    for (const auto& msg : p.messages) {
      if (mode_ == "bar") std::cerr << "\r\033[K";
      if (mode_ != "none") std::cerr << msg << "\n";
    }
    p.messages.clear();
    const std::size_t run_done = p.ok + p.failed;
    const std::size_t left = p.total - p.finished();
    const double eta = run_done > 0 ? el / static_cast<double>(run_done) * static_cast<double>(left) : NAN;
    char counts[160];
    std::snprintf(counts, sizeof counts, "%zu/%zu  ok %zu  failed %zu  resumed %zu  running %zu", p.finished(), p.total,
                  p.ok, p.failed, p.resumed, p.running);
    if (mode_ == "bar") {
      const int width = 28;
      const int fill = p.total ? static_cast<int>(width * p.finished() / p.total) : width;
      std::string bar(static_cast<std::size_t>(fill), '#');
      bar += std::string(static_cast<std::size_t>(width - fill), '.');
      std::cerr << "\r\033[Ksurvey [" << bar << "] " << counts << "  elapsed " << hms(el) << "  ETA "
                << (left == 0 ? "0:00" : hms(eta)) << (final_call ? "\n" : "") << std::flush;
    } else if (mode_ == "lines") {
      const bool changed = p.finished() != last_finished_;
      if (final_call || (changed && el - last_line_ >= 10.0) || (changed && last_finished_ == 0 && p.finished() > 0)) {
        std::cerr << "survey: " << counts << ", elapsed " << hms(el) << ", ETA " << (left == 0 ? "0:00" : hms(eta))
                  << "\n"
                  << std::flush;
        last_line_ = el;
        last_finished_ = p.finished();
      }
    }
    (void)log_;
  }

 private:
  Log& log_;
  std::string mode_;
  double last_line_ = -1e9;
  std::size_t last_finished_ = 0;
};

// Runs (or skips) one target; never throws.
Outcome execute(const SurveyTarget& t, const config::SurveySettings& s, bool restart, std::string& reason) {
  try {
    if (!restart && finished(t)) return kResumed;
    ensure_directory(t.directory);
    std::error_code ec;
    fs::remove(record_path(t), ec);  // a kill from here on leaves no record: the target reruns
    clean_temporaries(t.directory);
    const std::string logfile = (fs::path(t.directory) / (t.id + ".log")).string();
    fs::remove(logfile, ec);
    Log tl(true);
    tl.open_file(logfile);
    TargetRecord rec;
    rec.target_id = t.id;
    rec.config_hash = t.config_hash;
    try {
      rec.row = run_survey_target(t, s, tl);
      rec.ok = true;
    } catch (const std::exception& e) {
      rec.ok = false;
      rec.reason = e.what();
      if (rec.reason.empty()) rec.reason = "unknown error";
      std::replace(rec.reason.begin(), rec.reason.end(), '\n', ' ');
      tl.info("error: " + rec.reason);
    }
    write_record(record_path(t), rec);
    reason = rec.reason;
    return rec.ok ? kOk : kFailed;
  } catch (const std::exception& e) {
    reason = std::string("cannot record the target: ") + e.what();
    return kFailed;
  }
}

// Hands out indices into `todo` (the targets this run is responsible for).
class Dispatcher {
 public:
  virtual ~Dispatcher() = default;
  // Reports the previous target's outcome (kNone for the first call) and
  // returns the next position in the plan, or -1 when there is none.
  virtual long long next(long long done_index, Outcome done) = 0;
};

class LocalDispatcher : public Dispatcher {
 public:
  explicit LocalDispatcher(const std::vector<std::size_t>& todo) : todo_(todo) {}
  long long next(long long, Outcome) override { return take(); }
  long long take() {
    const std::size_t k = next_.fetch_add(1);
    return k < todo_.size() ? static_cast<long long>(todo_[k]) : -1;
  }
  // Targets not handed out yet.
  std::size_t remaining() const {
    const std::size_t k = next_.load();
    return k < todo_.size() ? todo_.size() - k : 0;
  }

 private:
  const std::vector<std::size_t>& todo_;
  std::atomic<std::size_t> next_{0};
};

#ifdef ICMSCOPE_WITH_MPI
constexpr int kTagRequest = 711, kTagAssign = 712, kTagRankDone = 713;

// Ranks > 0: ask rank 0 (serialised over the worker threads).
class RemoteDispatcher : public Dispatcher {
 public:
  long long next(long long done_index, Outcome done) override {
    std::lock_guard<std::mutex> g(m_);
    long long msg[2] = {done_index, static_cast<long long>(done)};
    MPI_Send(msg, 2, MPI_LONG_LONG, 0, kTagRequest, MPI_COMM_WORLD);
    long long idx = -1;
    MPI_Recv(&idx, 1, MPI_LONG_LONG, 0, kTagAssign, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
    return idx;
  }

 private:
  std::mutex m_;
};
#endif

std::string failures_csv(const std::vector<SurveyFailure>& f) {
  std::string o = "target_index,target_id,reason\n";
  for (const auto& x : f)
    o += std::to_string(x.index + 1) + "," + csv_field(x.target_id) + "," + csv_field(x.reason) + "\n";
  return o;
}

}  // namespace

Catalog collect_catalog(const std::vector<SurveyTarget>& plan, std::vector<SurveyFailure>& failures) {
  std::vector<CatalogRow> rows;
  failures.clear();
  for (const auto& t : plan) {
    const auto r = read_record(record_path(t));
    if (r && r->ok && r->target_id == t.id && r->config_hash == t.config_hash) {
      rows.push_back(r->row);
      continue;
    }
    SurveyFailure f;
    f.index = t.index;
    f.target_id = t.id;
    if (!r) f.reason = "not run (no record)";
    else if (r->config_hash != t.config_hash) f.reason = "not run with the current settings (record of an older configuration)";
    else f.reason = r->reason;
    failures.push_back(f);
  }
  return assemble_catalog(rows);
}

SurveyRunResult run_survey(const config::SurveySettings& s, const SurveyOptions& o, Log& log) {
  const auto t0 = clock_type::now();
  if (o.shard_count < 1 || o.shard_index < 0 || o.shard_index >= o.shard_count)
    throw core::ConfigError("--shard: expected K/N with 0 <= K < N, got " + std::to_string(o.shard_index) + "/" +
                            std::to_string(o.shard_count));
  if (o.mpi && !survey_mpi_available())
    throw core::ConfigError("--mpi: this icmscope was built without MPI (configure with -DICMSCOPE_MPI=ON)");
  if (o.mpi && (o.shard_count > 1 || o.collect_only || !o.only.empty()))
    throw core::ConfigError("--mpi: not combinable with --shard, --only or --collect");
  if (o.collect_only && (o.shard_count > 1 || !o.only.empty()))
    throw core::ConfigError("--collect: not combinable with --shard or --only");
  SurveyRunResult res;
  res.output_directory =
      fs::absolute(o.output_directory.empty() ? s.output_directory : o.output_directory).lexically_normal().string();
  while (res.output_directory.size() > 1 && res.output_directory.back() == '/') res.output_directory.pop_back();
  const std::string out = res.output_directory;

  int rank = 0, nranks = 1, local_ranks = 1;
#ifdef ICMSCOPE_WITH_MPI
  int provided = 0;
  if (o.mpi) {
    int inited = 0;
    MPI_Initialized(&inited);
    if (!inited) MPI_Init_thread(nullptr, nullptr, MPI_THREAD_SERIALIZED, &provided);
    else MPI_Query_thread(&provided);
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    MPI_Comm_size(MPI_COMM_WORLD, &nranks);
    // Ranks sharing this node share its cores.
    MPI_Comm node;
    MPI_Comm_split_type(MPI_COMM_WORLD, MPI_COMM_TYPE_SHARED, rank, MPI_INFO_NULL, &node);
    MPI_Comm_size(node, &local_ranks);
    MPI_Comm_free(&node);
  }
#endif
  res.is_root = rank == 0;

  ensure_directory(out);
  ensure_directory((fs::path(out) / "targets").string());
  ensure_directory((fs::path(out) / "logs").string());
  res.log_file = (fs::path(out) / "logs" /
                  (safe_name(s.name) + "_" + stamp() + (nranks > 1 ? "_rank" + std::to_string(rank) : "") + ".log"))
                     .string();
  log.open_file(res.log_file);
  std::mutex log_mutex;

  const std::vector<SurveyTarget> plan = plan_survey(s, out);
  res.targets = plan.size();
  const std::string prefix = (fs::path(out) / safe_name(s.name)).string();
  if (res.is_root && !o.collect_only) {
    res.resolved_file = prefix + "_sample_resolved.yaml";
    write_text_file(res.resolved_file, s.resolved_yaml);
  }

  // Targets this run is responsible for.
  std::vector<std::size_t> todo;
  std::vector<bool> selected(plan.size(), o.only.empty());
  for (const auto& w : o.only) {
    bool hit = false;
    for (const auto& t : plan)
      if (t.id == w || std::to_string(t.index + 1) == w) selected[t.index] = hit = true;
    if (!hit) throw core::ConfigError("--only: '" + w + "' is neither a target id nor a target number (1-" +
                                      std::to_string(plan.size()) + ") of " + s.source_file);
  }
  if (!o.collect_only)
    for (const auto& t : plan)
      if (selected[t.index] && static_cast<int>(t.index % static_cast<std::size_t>(o.shard_count)) == o.shard_index)
        todo.push_back(t.index);
  res.other_shard = o.collect_only ? 0 : plan.size() - todo.size();

  const int cores = std::max(1, static_cast<int>(std::max(1u, std::thread::hardware_concurrency())) / local_ranks);
  int threads = o.threads > 0 ? o.threads : (s.threads > 0 ? s.threads : (o.mpi ? 1 : cores));
  threads = std::max(1, std::min<int>(threads, static_cast<int>(std::max<std::size_t>(1, todo.size()))));
#ifdef ICMSCOPE_WITH_MPI
  if (o.mpi && rank > 0 && provided < MPI_THREAD_SERIALIZED) threads = 1;
#endif
  const int omp_threads = o.omp_threads > 0 ? o.omp_threads : std::max(1, cores / threads);
  if (!o.collect_only)
    log.info("survey " + s.name + ": " + std::to_string(plan.size()) + " targets" +
             (o.shard_count > 1 ? ", shard " + std::to_string(o.shard_index) + "/" + std::to_string(o.shard_count) +
                                      " runs " + std::to_string(todo.size())
                                : "") +
             (nranks > 1 ? ", " + std::to_string(nranks) + " MPI ranks" : "") + ", " + std::to_string(threads) +
             " concurrent target(s) x " + std::to_string(omp_threads) + " OpenMP thread(s); output " + out);

  Progress prog;
  prog.total = todo.size();
  std::unique_ptr<Dispatcher> disp;
  LocalDispatcher* local = nullptr;
#ifdef ICMSCOPE_WITH_MPI
  if (o.mpi && rank > 0) disp = std::make_unique<RemoteDispatcher>();
#endif
  if (!disp) {
    auto l = std::make_unique<LocalDispatcher>(todo);
    local = l.get();
    disp = std::move(l);
  }
  (void)local;  // used by the MPI hand-out on rank 0
  std::atomic<std::size_t> ran_here{0}, failed_here{0};

  auto worker = [&]() {
#ifdef _OPENMP
    omp_set_num_threads(omp_threads);
#endif
    long long done_index = -1;
    Outcome done = kNone;
    for (;;) {
      const long long idx = disp->next(done_index, done);
      if (idx < 0) break;
      const SurveyTarget& t = plan[static_cast<std::size_t>(idx)];
      std::size_t running_now = 0;
      {
        std::lock_guard<std::mutex> g(prog.m);
        running_now = ++prog.running;
      }
#ifdef _OPENMP
      // At the tail of a run fewer targets than workers are left: give them the
      // idle cores (results do not depend on the OpenMP thread count).
      if (o.omp_threads == 0 && local && !o.mpi) {
        const std::size_t active = std::max<std::size_t>(
            1, std::min<std::size_t>(static_cast<std::size_t>(threads), running_now + local->remaining()));
        omp_set_num_threads(std::max(omp_threads, cores / static_cast<int>(active)));
      }
#endif
      (void)running_now;
      std::string reason;
      const auto ts = clock_type::now();
      const Outcome oc = execute(t, s, o.restart, reason);
      const double secs = std::chrono::duration<double>(clock_type::now() - ts).count();
      if (oc != kResumed) ++ran_here;
      if (oc == kFailed) ++failed_here;
      {
        std::lock_guard<std::mutex> g(log_mutex);
        char b[64];
        std::snprintf(b, sizeof b, " (%.1f s)", secs);
        if (oc == kOk) log.info("target " + std::to_string(t.index + 1) + " " + t.id + ": ok" + b);
        else if (oc == kFailed) log.info("target " + std::to_string(t.index + 1) + " " + t.id + ": FAILED: " + reason);
        else log.info("target " + std::to_string(t.index + 1) + " " + t.id + ": finished before, skipped");
      }
      {
        std::lock_guard<std::mutex> g(prog.m);
        --prog.running;
      }
      prog.done(oc, oc == kFailed ? "survey: target " + t.id + " failed: " + reason : "");
      done_index = idx;
      done = oc;
    }
  };

  // Quiet logs keep the progress display readable: run-level lines go to the log file.
  ProgressDisplay display(res.is_root ? o.progress : "none", log);
  std::vector<std::thread> pool;
  if (!o.collect_only)
    for (int k = 0; k < threads; ++k) pool.emplace_back(worker);

  std::size_t remote_ran = 0, remote_failed = 0;
  if (!o.collect_only) {
    if (o.mpi && rank > 0) {
      for (auto& th : pool) th.join();
#ifdef ICMSCOPE_WITH_MPI
      long long msg[2] = {-1, -1};
      MPI_Send(msg, 2, MPI_LONG_LONG, 0, kTagRankDone, MPI_COMM_WORLD);
#endif
    } else {
#ifdef ICMSCOPE_WITH_MPI
      int ranks_done = 0;
#endif
      for (;;) {
        {
          std::unique_lock<std::mutex> lk(prog.m);
          prog.cv.wait_for(lk, std::chrono::milliseconds(o.mpi ? 20 : 500));
          display.update(prog, false);
        }
#ifdef ICMSCOPE_WITH_MPI
        // Rank 0 hands out the next target to the worker that asks, and
        // learns the outcome of the previous one from the same message.
        if (o.mpi) {
          int flag = 0;
          MPI_Status st;
          MPI_Iprobe(MPI_ANY_SOURCE, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &st);
          while (flag) {
            long long msg[2] = {-1, -1};
            MPI_Recv(msg, 2, MPI_LONG_LONG, st.MPI_SOURCE, st.MPI_TAG, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
            if (st.MPI_TAG == kTagRequest) {
              if (msg[0] >= 0) {
                const auto oc = static_cast<Outcome>(msg[1]);
                const auto& t = plan[static_cast<std::size_t>(msg[0])];
                if (oc != kResumed) ++remote_ran;
                if (oc == kFailed) ++remote_failed;
                {
                  std::lock_guard<std::mutex> g(prog.m);
                  --prog.running;
                }
                prog.done(oc, oc == kFailed ? "survey: target " + t.id + " failed (rank " +
                                                  std::to_string(st.MPI_SOURCE) + "); its reason is in the failures file"
                                            : "");
              }
              const long long nx = local->take();
              if (nx >= 0) {
                std::lock_guard<std::mutex> g(prog.m);
                ++prog.running;
              }
              MPI_Send(&nx, 1, MPI_LONG_LONG, st.MPI_SOURCE, kTagAssign, MPI_COMM_WORLD);
            } else if (st.MPI_TAG == kTagRankDone) {
              ++ranks_done;
            }
            MPI_Iprobe(MPI_ANY_SOURCE, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &st);
          }
        }
#endif
        bool all = false;
        {
          std::lock_guard<std::mutex> g(prog.m);
          all = prog.finished() >= prog.total;
        }
#ifdef ICMSCOPE_WITH_MPI
        if (o.mpi) all = all && ranks_done == nranks - 1;
#endif
        if (all) break;
      }
      for (auto& th : pool) th.join();
    }
    std::lock_guard<std::mutex> g(prog.m);
    display.update(prog, true);
  }
  res.ran = ran_here + remote_ran;
  res.failed_now = failed_here + remote_failed;
  res.resumed = prog.resumed;

#ifdef ICMSCOPE_WITH_MPI
  if (o.mpi) MPI_Barrier(MPI_COMM_WORLD);
#endif

  // Catalog, failures, plots and summary (not for a shard of a job array).
  if (res.is_root && o.shard_count == 1 && o.only.empty()) {
    Catalog cat = collect_catalog(plan, res.failures);
    res.catalog_csv = prefix + "_catalog.csv";
    res.catalog_fits = prefix + "_catalog.fits";
    res.columns_csv = prefix + "_columns.csv";
    res.failures_csv = prefix + "_failures.csv";
    res.summary_file = prefix + "_summary.txt";
    write_catalog_csv(res.catalog_csv, cat);
    std::vector<io::FitsKeyword> keys = {
        io::fits_key("SAMPLE", s.name, "sample name"),
        io::fits_key("SAMPSEED", static_cast<long long>(s.seed), "sample seed"),
        io::fits_key("SAMPHASH", s.config_hash, "hash of the resolved sample file"),
        io::fits_key("NTARGETS", static_cast<long long>(plan.size()), "targets in the plan"),
        io::fits_key("NROWS", static_cast<long long>(cat.rows.size()), "targets with a result"),
        io::fits_key("NFAILED", static_cast<long long>(res.failures.size()), "targets without a result"),
        io::fits_key("CREATOR", std::string(core::kProgram) + " " + core::kVersion, "program")};
    write_catalog_fits(res.catalog_fits, cat, keys);
    write_text_file(res.columns_csv, catalog_columns_csv(cat, survey_column_description));
    write_text_file(res.failures_csv, failures_csv(res.failures));
    res.catalog_written = true;
    if (o.plots && !cat.rows.empty()) {
      try {
        res.plots = write_survey_plots(cat, prefix);
      } catch (const core::Error& e) {
        log.warn("survey: plots not written: " + std::string(e.what()));
      }
    }
    res.seconds = std::chrono::duration<double>(clock_type::now() - t0).count();
    res.summary_text = survey_summary_text(s.name, cat, res);
    write_text_file(res.summary_file, res.summary_text);
    log.info("survey: catalog " + res.catalog_csv + " (" + std::to_string(cat.rows.size()) + " rows), " +
             std::to_string(res.failures.size()) + " failed");
  }
  res.seconds = std::chrono::duration<double>(clock_type::now() - t0).count();

#ifdef ICMSCOPE_WITH_MPI
  if (o.mpi) {
    int code = res.exit_code();
    MPI_Bcast(&code, 1, MPI_INT, 0, MPI_COMM_WORLD);
    if (!res.is_root) res.failed_now = code == 0 ? 0 : std::max<std::size_t>(res.failed_now, 1);
    MPI_Finalize();
  }
#endif
  return res;
}

}  // namespace icmscope::pipeline
