#pragma once
// `survey`: every target of a sample (pipeline/survey_target.hpp), run
// concurrently and safely, and one catalog.
//
// Parallel: targets are handed out one at a time (dynamic assignment) to
// `threads` worker threads, each running its target with `omp_threads` OpenMP
// threads; with MPI (ICMSCOPE_MPI builds, --mpi) rank 0 hands out target
// indices to the worker threads of every rank. Results do not depend on the
// thread count, the rank count or the order: each target's seeds derive from
// (sample seed, target id) and the catalog is assembled in target order.
//
// Safe and resumable: each target's outcome is a record file written
// atomically in its folder (targets/<id>/record.txt) with its configuration
// hash; a rerun skips targets whose record is ok and matches the current hash,
// and reruns the others (failed, changed, never finished). The catalog (CSV,
// FITS), the failures list and the summary are rebuilt from the records at the
// end of every run, so a kill -9 at any moment leaves no partial or duplicated
// row, and a rerun gives the same final catalog. A failing target (unreadable
// file, NaN cells, a broken image) is isolated: its reason goes to the
// failures file and the rest of the sample completes.
//
// Job arrays: shard K/N runs the targets with index % N == K and writes no
// catalog; collect_only assembles the catalog from the records of all shards.
#include <string>
#include <vector>

#include "icmscope/config/survey_settings.hpp"
#include "icmscope/pipeline/catalog.hpp"
#include "icmscope/pipeline/log.hpp"
#include "icmscope/pipeline/survey_target.hpp"

namespace icmscope::pipeline {

struct SurveyOptions {
  std::string output_directory;   // "" = the sample's survey.output_directory
  int threads = 0;                // concurrent targets per process (0 = survey.threads, else the cores; 1 with MPI)
  int omp_threads = 0;            // OpenMP threads per target (0 = max(1, cores / threads))
  bool restart = false;           // ignore existing records: rerun every target
  int shard_index = 0;            // job arrays: run targets with index % shard_count == shard_index
  int shard_count = 1;
  bool collect_only = false;      // run nothing; assemble the catalog from the records
  // Run only these targets (ids or 1-based indices); like a shard, writes no catalog.
  std::vector<std::string> only;
  bool mpi = false;               // dynamic assignment over MPI ranks (needs an ICMSCOPE_MPI build)
  std::string progress = "auto";  // auto (bar on a terminal, else lines) | bar | lines | none
  bool plots = true;              // summary plots (PLplot PNG)
};

// Whether this build has MPI support.
bool survey_mpi_available();

struct SurveyFailure {
  std::size_t index = 0;
  std::string target_id;
  std::string reason;
};

struct SurveyRunResult {
  std::size_t targets = 0;     // in the plan
  std::size_t ran = 0;         // run now (this process / all ranks)
  std::size_t resumed = 0;     // finished before, skipped
  std::size_t other_shard = 0; // left to other shards
  std::vector<SurveyFailure> failures;  // every target of the plan without an ok record (catalog runs)
  std::size_t failed_now = 0;  // failures of the targets run now
  std::string output_directory;
  std::string catalog_csv, catalog_fits, columns_csv, failures_csv, summary_file, log_file, resolved_file;
  std::vector<std::string> plots;
  std::string summary_text;    // the short text summary printed at the end
  double seconds = 0.0;
  bool catalog_written = false;
  bool is_root = true;         // false on MPI ranks > 0 (they write no catalog)
  // 0 = every target has an ok record (or, for a shard run, every target run now succeeded); 7 otherwise.
  int exit_code() const;
};

// The catalog of a plan from the record files (ok records matching the
// target's hash, in target order) and the failures (every other target).
Catalog collect_catalog(const std::vector<SurveyTarget>& plan, std::vector<SurveyFailure>& failures);

SurveyRunResult run_survey(const config::SurveySettings& s, const SurveyOptions& o, Log& log);

}  // namespace icmscope::pipeline
