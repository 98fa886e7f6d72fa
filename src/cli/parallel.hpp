// cli/parallel.hpp (CLI-private) -- the command line started by an MPI launcher (mpirun, srun).
//
// A process counts as launched by MPI when its environment has OMPI_COMM_WORLD_SIZE (Open MPI),
// PMI_SIZE (MPICH, Slurm PMI-2) or PMIX_RANK (PMIx). Then, in a program with an MPI backend (src/mpi/,
// installed by main.cpp when CMake option ZEELINE_WITH_MPI finds MPI), MPI is started before the command
// line is parsed and:
//   * `map` runs on every rank (mpi/distributed_maps.hpp): rank 0 writes the output and prints;
//   * every other command runs on rank 0 alone; the other ranks end at once with exit code 0;
//   * an error on every rank alike (a failure inside the distributed map) is printed once by rank 0 and
//     all ranks end with its exit code; any other error is printed by the rank that met it, with its
//     rank number, and the whole run is stopped with MPI_Abort and that exit code.
// A program without the backend (zeeline_serial, a build without MPI) refuses to run as several copies
// (exit 2), since each would write the same output. Without a launcher nothing changes: one process, MPI
// never started. This file never includes mpi.h: zeeline_cli (shared with the Python module) has no MPI.
#pragma once

#include <exception>
#include <stdexcept>
#include <string>

#include "zeeline/io/cube_reader.hpp"
#include "zeeline/maps/field_maps.hpp"

namespace zeeline::cli {

struct ParallelInfo {
  bool mpi = false;     ///< MPI was started (launched by mpirun/srun in a build with MPI)
  int rank = 0, size = 1;
  int ranks_on_node = 1;  ///< ranks sharing this node (for the default thread count)
};

/// What an MPI build plugs in (src/mpi/mpi_backend.cpp). The functions run on every rank.
struct ParallelBackend {
  /// MPI_Init and the rank, size and ranks on this node.
  void (*start)(int& argc, char**& argv, ParallelInfo& info);
  void (*stop)();
  /// MPI_Abort: ends every rank with `code`.
  void (*abort)(int code);
  /// The distributed map (mpi/distributed_maps.hpp); throws CollectiveError for a failure known to all ranks.
  RunStatus (*compute_maps)(CubeReader& reader, const FieldMapOptions& options, const FieldMapRunOptions& run,
                            long rows_per_task, FieldMaps& maps, std::string& summary);
  const char* launcher;  ///< mpiexec found at build time (for bench)
  /// Collective: every rank gives its set-up failure (code 0 = none, and its message). Returns false when no
  /// rank failed; otherwise true, with `code` and `message` of the lowest failing rank on every rank and
  /// `reporter` set to that rank.
  bool (*agree_failure)(int& code, std::string& message, int& reporter);
};
/// Called by main() before StartParallel in a program built with MPI.
void InstallParallelBackend(const ParallelBackend* backend);

/// Starts MPI when launched by an MPI launcher (see above). Throws OptionError in a build without MPI
/// launched as several copies.
void StartParallel(int& argc, char**& argv);
/// Finalizes MPI if it was started (the end of main).
void StopParallel();
const ParallelInfo& Parallel();
/// Whether this program has the MPI backend (CMake option ZEELINE_WITH_MPI found MPI).
bool BuiltWithMpi();

/// The MPI launcher found at build time (mpiexec/mpirun), for bench; empty without the backend.
std::string MpiLauncher();
/// False on ranks other than 0 for every command but `map` (they do nothing).
bool RunsOnThisRank(const std::string& subcommand);
/// The rank that prints and writes outputs (rank 0, or the only process).
inline bool IsOutputRank() { return Parallel().rank == 0; }
/// Threads per process for "0 = all cores": all of them in one process; under MPI the node's cores shared
/// among its ranks (OMP_NUM_THREADS, when set, wins).
int DefaultThreads();

/// The same failure on every rank (from the distributed map): printed once, by rank 0.
class CollectiveError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// A failure every rank knows of with its exit code (AgreeOnSetup): printed once, by rank 0.
class AgreedError : public CollectiveError {
 public:
  AgreedError(int code, const std::string& message) : CollectiveError(message), code_(code) {}
  int code() const { return code_; }

 private:
  int code_;
};

/// Exit code of a failure as main() reports it: 2 bad command line (OptionError, UnitError), 3 output not
/// written (OutputError), 1 otherwise (docs/cli.md).
int ExitCodeOf(const std::exception& e);

/// Under MPI with several ranks, a collective check point after the set-up each rank does alone (options,
/// cube header, output file): `failure` is this rank's exception (null when it succeeded). When any rank
/// failed, every rank throws AgreedError with the lowest failing rank's code and message, so the failure is
/// printed once and every rank exits with that code (no MPI_Abort). Otherwise returns; in one process it
/// rethrows `failure` if set.
void AgreeOnSetup(const std::exception_ptr& failure);

/// Prints a failure caught in main and returns `code`; under MPI as described above (may not return:
/// MPI_Abort).
int ReportFailure(const std::exception& e, int code);

/// `map`'s compute step: ComputeFieldMaps in one process, every rank's share under MPI (rows_per_task:
/// the task size there, 0 = automatic). On ranks other than 0 the maps stay empty. `summary` gets one line
/// about the ranks (empty in one process).
RunStatus ComputeMapsOnAllRanks(CubeReader& reader, const FieldMapOptions& options, const FieldMapRunOptions& run,
                                long rows_per_task, FieldMaps& maps, std::string& summary);

}  // namespace zeeline::cli
