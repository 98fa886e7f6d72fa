#include "mpi/distributed_maps.hpp"

#include <mpi.h>

#include <algorithm>
#include <chrono>
#include <cstring>
#include <exception>
#include <limits>
#include <sstream>
#include <thread>

#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

// Message tags between the ranks and rank 0.
enum Tag : int { kTagRequest = 1, kTagTask = 2, kTagResult = 3, kTagError = 4 };
// Status broadcast by rank 0 after setup and after the task loop.
enum Status : int { kStatusOk = 0, kStatusFailed = 1, kStatusCancelled = 2 };

constexpr int kHeaderWords = 3;  // task, pixels, ME iterations

int Rank() {
  int r = 0;
  MPI_Comm_rank(MPI_COMM_WORLD, &r);
  return r;
}

int Size() {
  int s = 1;
  MPI_Comm_size(MPI_COMM_WORLD, &s);
  return s;
}

// Rank 0's status and message to every rank.
void BroadcastStatus(int& status, std::string& message) {
  MPI_Bcast(&status, 1, MPI_INT, 0, MPI_COMM_WORLD);
  std::int64_t n = static_cast<std::int64_t>(message.size());
  MPI_Bcast(&n, 1, MPI_INT64_T, 0, MPI_COMM_WORLD);
  message.resize(static_cast<std::size_t>(n));
  if (n > 0) MPI_Bcast(message.data(), static_cast<int>(n), MPI_CHAR, 0, MPI_COMM_WORLD);
}

// Every member of SpectralLayout (field_maps.hpp): a member left out would make the workers' pixels differ
// from one process's (the median level sets the data-sanity ceiling).
void BroadcastLayout(SpectralLayout& layout) {
  MPI_Bcast(&layout.window_halfwidth_nm, 1, MPI_DOUBLE, 0, MPI_COMM_WORLD);
  MPI_Bcast(&layout.median_level, 1, MPI_DOUBLE, 0, MPI_COMM_WORLD);
  std::vector<std::uint64_t> idx(layout.continuum.begin(), layout.continuum.end());
  std::int64_t n = static_cast<std::int64_t>(idx.size());
  MPI_Bcast(&n, 1, MPI_INT64_T, 0, MPI_COMM_WORLD);
  idx.resize(static_cast<std::size_t>(n));
  MPI_Bcast(idx.data(), static_cast<int>(n), MPI_UINT64_T, 0, MPI_COMM_WORLD);
  layout.continuum.assign(idx.begin(), idx.end());
}

// Waits for a request without spinning a core (a blocking MPI call polls; on a shared or oversubscribed
// node that would take CPU from the ranks that compute).
void WaitGently(MPI_Request& request) {
  int done = 0;
  while (true) {
    MPI_Test(&request, &done, MPI_STATUS_IGNORE);
    if (done) return;
    std::this_thread::sleep_for(std::chrono::microseconds(100));
  }
}

// FieldMaps::method_counts of rows [0, rows) from the METHOD map (what a one-process run has counted).
void CountMethods(long rows, FieldMaps& maps) {
  std::fill(std::begin(maps.method_counts), std::end(maps.method_counts), 0);
  const std::size_t n = static_cast<std::size_t>(rows * maps.nx);
  for (std::size_t i = 0; i < n; ++i)
    if (maps.method[i] >= 0 && maps.method[i] < 5) ++maps.method_counts[maps.method[i]];
}

template <class T>
void Append(std::vector<char>& buf, const T* data, std::size_t n) {
  const std::size_t at = buf.size();
  buf.resize(at + n * sizeof(T));
  if (n) std::memcpy(buf.data() + at, data, n * sizeof(T));
}

template <class T>
const char* Take(const char* p, T* data, std::size_t n) {
  if (n) std::memcpy(data, p, n * sizeof(T));
  return p + n * sizeof(T);
}

// The maps of one finished task (all pixels of its rows) as one message.
void PackResult(long task, const FieldMaps& part, std::vector<char>& buf) {
  buf.clear();
  const std::size_t np = part.method.size();
  const std::int64_t header[kHeaderWords] = {task, static_cast<std::int64_t>(np), part.me_iterations};
  Append(buf, header, kHeaderWords);
  for (const auto& s : part.slots) Append(buf, s.data(), np);
  Append(buf, part.method.data(), np);
  Append(buf, part.quality.data(), np);
  if (buf.size() > static_cast<std::size_t>(std::numeric_limits<int>::max()))
    throw OptionError("the maps of one task are " + std::to_string(buf.size() >> 20) +
                      " MiB, more than one MPI message holds; use a smaller --rows-per-task");
}

// Places a packed result into the whole-cube maps at the task's first row; returns the task and its pixels.
struct TaskPlan {
  long first_row = 0, ny = 0, tasks = 0, min_rows = 0, max_rows = 0;
  std::vector<long> begin;  ///< first row of each task, then ny
  long Begin(long t) const { return begin[static_cast<std::size_t>(t)]; }
  long Rows(long t) const { return begin[static_cast<std::size_t>(t) + 1] - Begin(t); }
};

// Tasks in row order. A given size: all of it. Automatic: guided sizes, a quarter of the remaining rows'
// share per rank, between 1/32 of a rank's share and one reader tile: large tasks first (few messages),
// small ones last (the ranks finish together). Fixed by the row count alone, so every rank agrees.
TaskPlan PlanTasks(long ny, long first_row, long rows_per_tile, int ranks, const DistributedMapOptions& d) {
  TaskPlan plan;
  plan.first_row = first_row;
  plan.ny = ny;
  const long todo = ny - first_row;
  const long ceiling = std::max(rows_per_tile, 1L);
  const long floor_rows = std::min(ceiling, std::max(1L, (todo + 32L * ranks - 1) / (32L * ranks)));
  for (long y = first_row; y < ny;) {
    plan.begin.push_back(y);
    const long remaining = ny - y;
    long rows = d.rows_per_task > 0 ? d.rows_per_task
                                    : std::clamp((remaining + 4L * ranks - 1) / (4L * ranks), floor_rows, ceiling);
    rows = std::min(rows, remaining);
    plan.min_rows = plan.min_rows ? std::min(plan.min_rows, rows) : rows;
    plan.max_rows = std::max(plan.max_rows, rows);
    y += rows;
  }
  plan.tasks = static_cast<long>(plan.begin.size());
  plan.begin.push_back(ny);
  if (d.rows_per_task > 0) plan.min_rows = plan.max_rows = d.rows_per_task;  // the last one may be shorter
  return plan;
}

// A packed result as the maps of its task's rows (block); returns the task.
long UnpackResult(const std::vector<char>& buf, const TaskPlan& plan, const FieldMapEngine& engine, FieldMaps& block) {
  std::int64_t header[kHeaderWords];
  const char* p = Take(buf.data(), header, kHeaderWords);
  const long task = static_cast<long>(header[0]);
  const std::size_t np = static_cast<std::size_t>(header[1]);
  if (task < 0 || task >= plan.tasks)
    throw DistributedRunError("internal error: a result message names task " + std::to_string(task));
  engine.InitMaps(plan.Rows(task), block);
  const std::size_t expected = kHeaderWords * sizeof(std::int64_t) +
                               np * (kSlotCount * sizeof(float) + sizeof(std::int16_t) + sizeof(std::int32_t));
  if (buf.size() != expected || np != block.method.size())
    throw DistributedRunError("internal error: a result message for task " + std::to_string(task) +
                              " does not match the map size");
  block.me_iterations = header[2];
  for (auto& s : block.slots) p = Take(p, s.data(), np);
  p = Take(p, block.method.data(), np);
  Take(p, block.quality.data(), np);
  return task;
}

// Rank 0's sink, remembering the first failure of the real one: that failure (the map file could not be
// written: exit 3 in `map`) is rethrown as it was on rank 0 once every rank knows the run failed.
class RecordingSink : public FieldMapSink {
 public:
  explicit RecordingSink(FieldMapSink* sink) : sink_(sink) {}
  void Begin(long rows_done, FieldMaps& maps) override { Guard([&] { sink_->Begin(rows_done, maps); }); }
  void Put(const FieldMaps& block, long first_row) override { Guard([&] { sink_->Put(block, first_row); }); }
  void Sync() override { Guard([&] { sink_->Sync(); }); }
  std::exception_ptr failure;

 private:
  template <class F>
  void Guard(F&& f) {
    try {
      f();
    } catch (...) {
      if (!failure) failure = std::current_exception();
      throw;
    }
  }
  FieldMapSink* sink_;
};

std::string RowsText(const TaskPlan& plan, long t) {
  return "rows " + std::to_string(plan.Begin(t) + 1) + ".." + std::to_string(plan.Begin(t) + plan.Rows(t));
}

// Ranks other than 0: ask, compute, send, until rank 0 answers -1.
void RunWorker(CubeReader& reader, const FieldMapEngine& engine, const TaskPlan& plan) {
  const int rank = Rank(), size = Size();
  auto request = [] {
    const std::int64_t nothing = 0;
    MPI_Send(&nothing, 1, MPI_INT64_T, 0, kTagRequest, MPI_COMM_WORLD);
  };
  auto receive = [] {
    std::int64_t t = -1;
    MPI_Request r;
    MPI_Irecv(&t, 1, MPI_INT64_T, 0, kTagTask, MPI_COMM_WORLD, &r);
    WaitGently(r);
    return static_cast<long>(t);
  };
  RawCubeTile tile;  // file order; each pixel is gathered by the thread that computes it
  FieldMaps part;
  std::vector<char> out[2];
  MPI_Request sent[2] = {MPI_REQUEST_NULL, MPI_REQUEST_NULL};
  int slot = 0;
  long next = receive();  // rank 0 sends the first task unasked
  while (next >= 0) {
    const long t = next;
    request();  // the answer waits for us while we work
    WaitGently(sent[slot]);
    int tag = kTagResult;
    try {
      reader.ReadRowsRaw(plan.Begin(t), plan.Rows(t), tile);
      engine.InitMaps(plan.Rows(t), part);
      engine.Compute(tile, part, plan.Begin(t));
      PackResult(t, part, out[slot]);
    } catch (const std::exception& e) {
      tag = kTagError;
      const std::string text = "rank " + std::to_string(rank) + " of " + std::to_string(size) + " (cube " +
                               RowsText(plan, t) + "): " + e.what();
      out[slot].clear();
      Append(out[slot], text.data(), text.size());
    }
    MPI_Isend(out[slot].data(), static_cast<int>(out[slot].size()), MPI_BYTE, 0, tag, MPI_COMM_WORLD, &sent[slot]);
    slot ^= 1;
    next = receive();
  }
  WaitGently(sent[0]);
  WaitGently(sent[1]);
}

// Rank 0: hands out tasks, computes some itself, gathers everything; returns the status of the loop.
int RunCoordinator(CubeReader& reader, const FieldMapEngine& engine, const TaskPlan& plan,
                   const FieldMapRunOptions& run, const DistributedMapOptions& d, FieldMaps& maps,
                   DistributedMapReport& report, std::string& failure) {
  const int size = Size();
  const bool self_compute = size <= kCoordinatorComputesUpTo;
  report.tasks_per_rank.assign(static_cast<std::size_t>(size), 0);
  report.pixels_per_rank.assign(static_cast<std::size_t>(size), 0);
  std::vector<char> done(static_cast<std::size_t>(plan.tasks), 0);
  long next = 0, prefix = 0, assigned_remote = 0, answered_remote = 0;
  int stopped = 0;
  bool cancelled = false;
  using Clock = std::chrono::steady_clock;
  Clock::time_point last_save = Clock::now();
  long saved_rows = maps.rows_done;
  // Counts: those of the checkpoint's rows, and of each task (a checkpoint counts the finished prefix only).
  FieldMaps before;
  AddCounts(maps, before);
  std::vector<FieldMaps> task_counts(static_cast<std::size_t>(plan.tasks));
  const std::vector<int> whole_slots = WholeMapSlots(engine.options());

  auto stopping = [&] { return !failure.empty() || cancelled; };
  auto take = [&]() -> long { return (stopping() || next >= plan.tasks) ? -1 : next++; };
  auto save = [&](bool force) {
    if (run.checkpoint_path.empty() || maps.rows_done == saved_rows) return;
    if (!force && std::chrono::duration<double>(Clock::now() - last_save).count() < d.checkpoint_interval_s) return;
    FieldMaps snapshot;
    snapshot.nx = maps.nx;
    snapshot.ny = maps.ny;
    snapshot.rows_done = maps.rows_done;
    AddCounts(before, snapshot);
    for (long t = 0; t < prefix; ++t) AddCounts(task_counts[static_cast<std::size_t>(t)], snapshot);
    run.sink->Sync();  // the rows first, then the checkpoint that counts on them
    SaveFieldMapSinkCheckpoint(run.checkpoint_path, run.fingerprint, snapshot);
    saved_rows = maps.rows_done;
    last_save = Clock::now();
  };
  // Finished rows of task t (all of it, or a part computed here): counted, kept when the end needs them,
  // handed to the sink.
  auto deliver = [&](long t, FieldMaps& block, long first_row) {
    CountMethods(block.ny, block);
    FieldMaps& c = task_counts[static_cast<std::size_t>(t)];
    AddCounts(block, c);
    TallyRows(block, 0, block.ny, c);
    const std::size_t at = static_cast<std::size_t>(first_row * maps.nx), np = block.method.size();
    for (int k : whole_slots)
      std::copy_n(block.slots[static_cast<std::size_t>(k)].begin(), np, maps.slots[static_cast<std::size_t>(k)].begin() + at);
    const auto t0 = Clock::now();
    run.sink->Put(block, first_row);
    maps.sink_seconds += std::chrono::duration<double>(Clock::now() - t0).count();
  };
  auto finished = [&](long t) {
    done[static_cast<std::size_t>(t)] = 1;
    while (prefix < plan.tasks && done[static_cast<std::size_t>(prefix)]) ++prefix;
    maps.rows_done = prefix < plan.tasks ? plan.Begin(prefix) : plan.ny;
    if (run.progress) run.progress(maps.rows_done, plan.ny);
    save(false);
  };
  std::vector<char> buf;
  FieldMaps block;  // one task's (or part of a task's) maps
  auto handle = [&](const MPI_Status& st) {
    int n = 0;
    MPI_Get_count(&st, MPI_BYTE, &n);
    buf.resize(static_cast<std::size_t>(n));
    MPI_Recv(buf.data(), n, MPI_BYTE, st.MPI_SOURCE, st.MPI_TAG, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
    const std::size_t src = static_cast<std::size_t>(st.MPI_SOURCE);
    if (st.MPI_TAG == kTagRequest) {
      const std::int64_t t = take();
      MPI_Send(&t, 1, MPI_INT64_T, st.MPI_SOURCE, kTagTask, MPI_COMM_WORLD);
      if (t < 0) {
        ++stopped;
      } else {
        ++assigned_remote;
        ++report.tasks_per_rank[src];
      }
    } else if (st.MPI_TAG == kTagResult) {
      ++answered_remote;
      try {  // a failure here (checkpoint not written, ...) must not leave the other ranks waiting
        const long task = UnpackResult(buf, plan, engine, block);
        report.pixels_per_rank[src] += static_cast<long>(block.method.size());
        deliver(task, block, plan.Begin(task));
        finished(task);
      } catch (const std::exception& e) {
        if (failure.empty()) failure = std::string("rank 0: ") + e.what();
      }
    } else if (st.MPI_TAG == kTagError) {
      ++answered_remote;
      if (failure.empty()) failure.assign(buf.begin(), buf.end());
    }
  };
  auto serve = [&] {
    int flag = 0;
    MPI_Status st;
    while (true) {
      MPI_Iprobe(MPI_ANY_SOURCE, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &st);
      if (!flag) break;
      handle(st);
    }
  };

  // Every rank's first task goes out unasked, before rank 0 starts on its own: nobody waits at the start.
  for (int r = 1; r < size; ++r) {
    const std::int64_t t = take();
    MPI_Send(&t, 1, MPI_INT64_T, r, kTagTask, MPI_COMM_WORLD);
    if (t < 0) {
      ++stopped;
    } else {
      ++assigned_remote;
      ++report.tasks_per_rank[static_cast<std::size_t>(r)];
    }
  }
  RawCubeTile row;
  while (true) {
    serve();
    if (run.cancel && run.cancel->load()) cancelled = true;
    if (self_compute) {
      const long t = take();
      if (t >= 0) {
        try {
          // In quarters, answering the other ranks in between: a rank asks for its next task when it starts
          // one, so the answer is there long before it needs it. (Reading row by row would answer sooner
          // but multiplies the reads: each block of rows is 4 x wavelengths separate runs in the file.)
          const long end = plan.Begin(t) + plan.Rows(t), chunk = std::max(1L, (plan.Rows(t) + 3) / 4);
          for (long y = plan.Begin(t); y < end; y += chunk) {
            const auto t0 = Clock::now();
            const long rows = std::min(chunk, end - y);
            reader.ReadRowsRaw(y, rows, row);
            const auto t1 = Clock::now();
            engine.InitMaps(rows, block);
            engine.Compute(row, block, y);
            maps.read_seconds += std::chrono::duration<double>(t1 - t0).count();
            maps.compute_seconds += std::chrono::duration<double>(Clock::now() - t1).count();
            deliver(t, block, y);
            serve();
          }
          ++report.tasks_per_rank[0];
          report.pixels_per_rank[0] += plan.Rows(t) * maps.nx;
          finished(t);
        } catch (const std::exception& e) {
          if (failure.empty())
            failure = "rank 0 of " + std::to_string(size) + " (cube " + RowsText(plan, t) + "): " + e.what();
        }
        continue;
      }
    }
    if (stopped == size - 1 && answered_remote == assigned_remote) break;
    // Nothing to compute here: wait for the next message without spinning a core.
    int flag = 0;
    MPI_Status st;
    while (true) {
      MPI_Iprobe(MPI_ANY_SOURCE, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &st);
      if (flag) break;
      std::this_thread::sleep_for(std::chrono::microseconds(200));
    }
  }
  maps.read_wait_seconds = maps.read_seconds;  // rank 0 reads its rows in line with its computation
  if (!failure.empty() || cancelled) {
    try {
      save(true);  // what was finished is kept for --resume
    } catch (const std::exception& e) {
      if (failure.empty()) failure = std::string("rank 0: ") + e.what();
    }
  }
  if (!failure.empty()) return kStatusFailed;
  if (!cancelled) {  // every task is in: the counts of the whole map
    for (const FieldMaps& c : task_counts) AddCounts(c, maps);
  }
  return cancelled ? kStatusCancelled : kStatusOk;
}

}  // namespace

std::string DistributedMapOptions::Validate() const {
  std::ostringstream m;
  if (rows_per_task < 0) m << "rows per task = " << rows_per_task << " must be >= 0 (0 = automatic)";
  else if (!(checkpoint_interval_s >= 0.0)) m << "checkpoint interval = " << checkpoint_interval_s << " s must be >= 0";
  return m.str();
}

RunStatus ComputeFieldMapsDistributed(CubeReader& reader, const FieldMapOptions& o, const FieldMapRunOptions& run,
                                      const DistributedMapOptions& d, FieldMaps& maps, DistributedMapReport& report) {
  const std::string problem = d.Validate();
  if (!problem.empty()) throw OptionError(problem);
  const int rank = Rank(), size = Size();
  const CubeInfo& info = reader.info();
  FieldMapEngine engine(info, o);  // the same checks on every rank
  RecordingSink sink(run.sink);
  FieldMapRunOptions run0 = run;
  if (rank == 0 && run.sink) run0.sink = &sink;
  std::exception_ptr setup_failure;  // rank 0
  auto fail = [&](const std::string& message) {
    DistributedRunError error(message);
    if (rank == 0) error.origin = sink.failure ? sink.failure : setup_failure;
    throw error;
  };

  // Setup on rank 0 (checkpoint, spectral layout); its outcome goes to every rank.
  int status = kStatusOk;
  std::string message;
  SpectralLayout layout;
  std::int64_t first_row = 0;
  if (rank == 0) {
    try {
      if (!run.sink) throw OptionError("ComputeFieldMapsDistributed: rank 0 needs a sink for the maps (run.sink)");
      engine.InitSinkMaps(maps);
      if (run.resume && !run.checkpoint_path.empty())
        LoadFieldMapSinkCheckpoint(run.checkpoint_path, run.fingerprint, maps);
      engine.ChooseLayout(reader);
      layout = engine.layout();
      first_row = maps.rows_done;
      run0.sink->Begin(maps.rows_done, maps);
    } catch (const std::exception& e) {
      status = kStatusFailed;
      message = e.what();
      setup_failure = std::current_exception();
    }
  }
  BroadcastStatus(status, message);
  if (status != kStatusOk) fail(message);
  BroadcastLayout(layout);
  MPI_Bcast(&first_row, 1, MPI_INT64_T, 0, MPI_COMM_WORLD);
  engine.set_layout(layout);
  maps.continuum_samples = layout.continuum.size();

  const TaskPlan plan = PlanTasks(info.ny, static_cast<long>(first_row), reader.rows_per_tile(), size, d);
  report.ranks = size;
  report.first_row = plan.first_row;
  report.min_rows_per_task = plan.min_rows;
  report.max_rows_per_task = plan.max_rows;
  report.tasks = plan.tasks;

  if (rank == 0) status = RunCoordinator(reader, engine, plan, run0, d, maps, report, message);
  else RunWorker(reader, engine, plan);
  BroadcastStatus(status, message);
  if (status == kStatusFailed) fail(message);
  if (status == kStatusCancelled) return RunStatus::kCancelled;
  if (rank == 0) {
    maps.rows_done = info.ny;
    engine.Finish(maps);
  }
  return RunStatus::kComplete;
}

}  // namespace zeeline
