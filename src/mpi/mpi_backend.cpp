#include "mpi/mpi_backend.hpp"

#include <mpi.h>

#include <cstdint>
#include <string>

#include "cli/parallel.hpp"
#include "mpi/distributed_maps.hpp"
#include "zeeline/core/threads.hpp"

namespace zeeline::cli {
namespace {

void Start(int& argc, char**& argv, ParallelInfo& info) {
  int provided = 0;
  MPI_Init_thread(&argc, &argv, MPI_THREAD_FUNNELED, &provided);  // only the main thread calls MPI
  MPI_Comm_rank(MPI_COMM_WORLD, &info.rank);
  MPI_Comm_size(MPI_COMM_WORLD, &info.size);
  MPI_Comm node;
  MPI_Comm_split_type(MPI_COMM_WORLD, MPI_COMM_TYPE_SHARED, 0, MPI_INFO_NULL, &node);
  MPI_Comm_size(node, &info.ranks_on_node);
  MPI_Comm_free(&node);
}

void Stop() {
  int finalized = 0;
  MPI_Finalized(&finalized);
  if (!finalized) MPI_Finalize();
}

void Abort(int code) { MPI_Abort(MPI_COMM_WORLD, code); }

bool AgreeFailure(int& code, std::string& message, int& reporter) {
  const int size = Parallel().size;
  const int mine = code != 0 ? Parallel().rank : size;
  MPI_Allreduce(&mine, &reporter, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
  if (reporter == size) return false;
  MPI_Bcast(&code, 1, MPI_INT, reporter, MPI_COMM_WORLD);
  std::int64_t n = static_cast<std::int64_t>(message.size());
  MPI_Bcast(&n, 1, MPI_INT64_T, reporter, MPI_COMM_WORLD);
  message.resize(static_cast<std::size_t>(n));
  if (n > 0) MPI_Bcast(message.data(), static_cast<int>(n), MPI_CHAR, reporter, MPI_COMM_WORLD);
  return true;
}

RunStatus ComputeMaps(CubeReader& reader, const FieldMapOptions& options, const FieldMapRunOptions& run,
                      long rows_per_task, FieldMaps& maps, std::string& summary) {
  DistributedMapOptions d;
  d.rows_per_task = rows_per_task;
  DistributedMapReport report;
  RunStatus status;
  try {
    status = ComputeFieldMapsDistributed(reader, options, run, d, maps, report);
  } catch (const DistributedRunError& e) {
    // Every rank is here. Rank 0's own failure (the map file not written: exit 3, ...) keeps its exit code
    // on every rank (docs/cli.md), without MPI_Abort.
    int code = 1;
    std::string message = e.what();
    if (e.origin) {
      try {
        std::rethrow_exception(e.origin);
      } catch (const std::exception& origin) {
        code = ExitCodeOf(origin);
        message = origin.what();
      } catch (...) {
      }
    }
    int reporter = 0;
    AgreeFailure(code, message, reporter);  // code != 0 on every rank: rank 0's code and message
    throw AgreedError(code, message);
  }
  if (Parallel().rank == 0) {
    summary = "mpi: " + std::to_string(report.ranks) + " ranks x " + std::to_string(ResolveThreadCount(options.threads)) +
              " threads, " + std::to_string(report.tasks) + " tasks of " + std::to_string(report.max_rows_per_task) +
              (report.min_rows_per_task < report.max_rows_per_task ? " down to " + std::to_string(report.min_rows_per_task) : "") +
              " rows; pixels per rank";
    for (long p : report.pixels_per_rank) summary += " " + std::to_string(p);
    if (report.first_row > 0) summary += "; resumed at row " + std::to_string(report.first_row + 1);
  }
  return status;
}

#ifndef ZEELINE_MPIEXEC
#define ZEELINE_MPIEXEC "mpirun"
#endif

const ParallelBackend kMpiBackend{Start, Stop, Abort, ComputeMaps, ZEELINE_MPIEXEC, AgreeFailure};

}  // namespace

void InstallMpiBackend() { InstallParallelBackend(&kMpiBackend); }

}  // namespace zeeline::cli
