// mpi/distributed_maps.hpp -- field maps of one cube computed by all ranks of an MPI run (built only with
// ZEELINE_WITH_MPI; the CLI reaches it through cli/parallel.hpp).
//
// Work: the rows still to do, [first_row, ny), are cut into tasks of whole spatial rows: rows_per_task
// each, or by default guided sizes (large first, small last, at most one reader tile; see PlanTasks).
// Rank 0 hands the tasks out in row order, one at a time, to whichever rank asks (dynamic: a
// Milne-Eddington pixel costs several times a weak-field one, so equal shares would leave ranks idle);
// each rank's first task is sent unasked, and every rank asks for its next task while it works on the
// current one, so it never waits for an answer.
// Each rank opens the cube itself and reads only the rows of its own tasks with cfitsio (rank 0 also reads
// the first tile once, to choose the spectral layout exactly as a one-process run does, and broadcasts
// it). Inside a rank, pixels are spread over its OpenMP threads (FieldMapOptions::threads).
// Rank 0 also computes tasks when there are at most kCoordinatorComputesUpTo ranks (with more, answering
// requests at once matters more than one more worker).
// Results: each rank sends the maps of a finished task to rank 0, which counts them and hands them to the
// sink (FieldMapRunOptions::sink, required on rank 0: `map` writes them into the map file at their rows, in
// the order they arrive), keeping whole only the maps the end needs (WholeMapSlots); after the last one it
// runs FieldMapEngine::Finish (azimuth disambiguation). Every pixel goes through the
// same FieldMapEngine::Compute as in ComputeFieldMaps and depends on that pixel only, so the maps are
// bit-identical to a one-process run, whatever the number of ranks, threads or the task size.
// Checkpoints (FieldMapRunOptions::checkpoint_path): rank 0 syncs the sink and writes the counts of the
// longest run of finished rows from the start (the one-process format of a run with a sink, so either kind
// of run resumes the other's) at most every checkpoint_interval_s seconds and whenever a run stops early.
// Failures: a rank whose task throws (a read error of its rows, ...) reports the rows and the message to
// rank 0, which stops handing out tasks, collects the tasks in flight, saves the checkpoint and ends the run
// on every rank with DistributedRunError; nothing is written. Cancellation (FieldMapRunOptions::cancel, on
// rank 0) stops the same way and returns kCancelled on every rank.
#pragma once

#include <cstdint>
#include <stdexcept>
#include <string>
#include <vector>

#include "zeeline/io/cube_reader.hpp"
#include "zeeline/maps/field_maps.hpp"

namespace zeeline {

/// Rank 0 works on tasks itself up to this many ranks.
constexpr int kCoordinatorComputesUpTo = 8;

struct DistributedMapOptions {
  long rows_per_task = 0;              ///< 0 = automatic: guided sizes, at most one reader tile
  double checkpoint_interval_s = 10.0; ///< least time between two checkpoint writes (0 = after every task)

  std::string Validate() const;
};

/// What the run did, filled on every rank (the per-rank lists on rank 0 only).
struct DistributedMapReport {
  int ranks = 1;
  long first_row = 0;       ///< rows before this came from the checkpoint (--resume)
  long min_rows_per_task = 0, max_rows_per_task = 0;
  long tasks = 0;
  std::vector<long> tasks_per_rank;   ///< rank 0 only
  std::vector<long> pixels_per_rank;  ///< rank 0 only
};

/// A rank failed inside the task loop or in rank 0's set-up. Thrown on every rank with the same message
/// (naming the rank, its rows and the cause), so that one rank reports it and all end cleanly. On rank 0,
/// `origin` is the exception that caused it when rank 0 met it (e.g. the map file could not be written), so
/// that the caller can report its kind (exit code) to every rank.
class DistributedRunError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
  std::exception_ptr origin;
};

/// Runs on every rank of MPI_COMM_WORLD with the same arguments (each rank's own reader of the same cube).
/// On rank 0, `maps` holds the counts and the WholeMapSlots on return (the rows went to run.sink); on the
/// other ranks it is left empty. Throws
/// OptionError / FitsError from the checks of FieldMapEngine (identical on every rank) and
/// DistributedRunError as above.
RunStatus ComputeFieldMapsDistributed(CubeReader& reader, const FieldMapOptions& options,
                                      const FieldMapRunOptions& run, const DistributedMapOptions& distributed,
                                      FieldMaps& maps, DistributedMapReport& report);

}  // namespace zeeline
