// The command line under an MPI launcher (cli/parallel.hpp). MPI itself is behind ParallelBackend.
#include "cli/parallel.hpp"

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <thread>

#include "cli/commands.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/threads.hpp"

namespace zeeline::cli {
namespace {

ParallelInfo g_parallel;
const ParallelBackend* g_backend = nullptr;

// The message with control bytes (which a hostile file or argument may carry into it) shown as \xNN, so the
// terminal neither hides nor interprets them; newlines and tabs are kept.
std::string Printable(const char* message) {
  std::string out;
  for (const char* c = message; *c; ++c) {
    const auto b = static_cast<unsigned char>(*c);
    if ((b < 0x20 && b != '\n' && b != '\t') || b == 0x7f) {
      char hex[5];
      std::snprintf(hex, sizeof hex, "\\x%02x", b);
      out += hex;
    } else {
      out += *c;
    }
  }
  return out;
}

// Copies an MPI launcher says it started (0 when not launched by one).
int LaunchedCopies() {
  for (const char* name : {"OMPI_COMM_WORLD_SIZE", "PMI_SIZE", "PMIX_SIZE"}) {
    if (const char* v = std::getenv(name)) return std::max(1, std::atoi(v));
  }
  return std::getenv("PMIX_RANK") ? 1 : 0;
}

}  // namespace

const ParallelInfo& Parallel() { return g_parallel; }

void InstallParallelBackend(const ParallelBackend* backend) { g_backend = backend; }

bool BuiltWithMpi() { return g_backend != nullptr; }

std::string MpiLauncher() { return g_backend ? g_backend->launcher : ""; }

void StartParallel(int& argc, char**& argv) {
  const int copies = LaunchedCopies();
  if (copies == 0) return;
  if (g_backend) {
    g_backend->start(argc, argv, g_parallel);
    g_parallel.mpi = true;
    return;
  }
  if (copies > 1)
    throw OptionError("this zeeline was built without MPI but was started as " + std::to_string(copies) +
                      " copies by an MPI launcher; each would compute and write the same output. Run it as one "
                      "process, or rebuild with MPI (libopenmpi-dev, CMake option ZEELINE_WITH_MPI; docs/scaling.md)");
}

void StopParallel() {
  if (g_parallel.mpi && g_backend) g_backend->stop();
}

bool RunsOnThisRank(const std::string& subcommand) { return g_parallel.rank == 0 || subcommand == "map"; }

int DefaultThreads() {
  const int all = ResolveThreadCount(0);
  if (!g_parallel.mpi || g_parallel.ranks_on_node <= 1 || std::getenv("OMP_NUM_THREADS")) return all;
  const int cores = static_cast<int>(std::thread::hardware_concurrency());
  return std::max(1, (cores > 0 ? cores : all) / g_parallel.ranks_on_node);
}

int ReportFailure(const std::exception& e, int code) {
  const std::string what = Printable(e.what());
  if (!g_parallel.mpi || g_parallel.size == 1) {
    std::fprintf(stderr, "zeeline: error: %s\n", what.c_str());
    return code;
  }
  if (dynamic_cast<const CollectiveError*>(&e)) {
    if (g_parallel.rank == 0) std::fprintf(stderr, "zeeline: error: %s\n", what.c_str());
    return code;
  }
  // Only this rank may know: report and stop every rank. Ranks other than 0 wait a moment first, so that
  // an error every rank meets (a missing file, an existing output) is normally printed once, by rank 0.
  if (g_parallel.rank != 0) std::this_thread::sleep_for(std::chrono::milliseconds(500));
  std::fprintf(stderr, "zeeline: error (rank %d of %d): %s\n", g_parallel.rank, g_parallel.size, what.c_str());
  std::fflush(stderr);
  g_backend->abort(code);
  return code;
}

int ExitCodeOf(const std::exception& e) {
  if (const auto* agreed = dynamic_cast<const AgreedError*>(&e)) return agreed->code();
  if (dynamic_cast<const OptionError*>(&e) || dynamic_cast<const UnitError*>(&e)) return 2;
  if (dynamic_cast<const OutputError*>(&e)) return 3;
  return 1;
}

void AgreeOnSetup(const std::exception_ptr& failure) {
  if (!g_parallel.mpi || g_parallel.size == 1 || !g_backend) {
    if (failure) std::rethrow_exception(failure);
    return;
  }
  int code = 0;
  std::string message;
  if (failure) {
    try {
      std::rethrow_exception(failure);
    } catch (const std::exception& e) {
      code = ExitCodeOf(e);
      message = e.what();
    } catch (...) {
      code = 1;
      message = "unknown error";
    }
  }
  int reporter = 0;
  if (!g_backend->agree_failure(code, message, reporter)) return;
  if (reporter != 0)
    message = "(rank " + std::to_string(reporter) + " of " + std::to_string(g_parallel.size) + ") " + message;
  throw AgreedError(code, message);
}

RunStatus ComputeMapsOnAllRanks(CubeReader& reader, const FieldMapOptions& options, const FieldMapRunOptions& run,
                                long rows_per_task, FieldMaps& maps, std::string& summary) {
  summary.clear();
  if (!g_parallel.mpi) return ComputeFieldMaps(reader, options, run, maps);
  return g_backend->compute_maps(reader, options, run, rows_per_task, maps, summary);
}

}  // namespace zeeline::cli
