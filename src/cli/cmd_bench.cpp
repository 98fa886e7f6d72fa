// `zeeline bench`: this machine's speed and memory figures in one run, through the library and CLI paths
// the real work uses (docs/scaling.md has the output format, the keys and how to read them).
//
// Steps: `zeeline simulate` writes a demo cube (and a 4x larger one); in this process the synthesis with and
// without its Jacobian is timed, the cube is read with bare cfitsio and with CubeReader, and
// ComputeFieldMaps runs wfa (1 thread) and me (1 and 2 threads); then `zeeline map` runs as child processes
// for the peak resident memory (wait4) and the process wall time, alone and under `mpirun -np 1` / `-np 2`.
#include <fitsio.h>
#include <stdlib.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <fcntl.h>
#include <signal.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <memory>
#include <string>
#include <thread>
#include <utility>
#include <vector>

#include "cli/commands.hpp"
#include "cli/interrupt.hpp"
#include "cli/parallel.hpp"
#include "zeeline/atomic/level.hpp"
#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/io/cube_reader.hpp"
#include "zeeline/maps/field_maps.hpp"
#include "zeeline/synth/stokes_synthesizer.hpp"

namespace zeeline::cli {
namespace {

namespace fs = std::filesystem;
using Clock = std::chrono::steady_clock;

// The bench line: Fe I 630.25 nm (5P1 - 5D0, g_eff 2.5), air wavelength.
constexpr double kLineNm = 630.2494;
const char* const kLineArgs[] = {"--lower", "5P1", "--upper", "5D0", "--wavelength", "630.2494nm", "--frame", "air"};

struct BenchArgs {
  long nx = 200, ny = 200;  // 40 000 Milne-Eddington pixels: the launcher's start-up stays small beside them
  int points = 96;
  bool quick = false;
  std::string keep;  // directory for the bench files (kept); empty = a temporary one, removed
  bool overwrite = false;  // with keep: replace bench files already there
};

// Ctrl-C: thrown out of RunBench so that its temporary directory is removed on the way out (exit 130).
struct BenchInterrupted {};

double Seconds(Clock::time_point t0) { return std::chrono::duration<double>(Clock::now() - t0).count(); }

// CPU seconds used by this process so far (all threads).
double CpuSeconds() {
  timespec ts{};
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}

// One figure: key, value (or n/a), unit ("-" for a pure number), description.
void Figure(const char* key, double value, const char* unit, const std::string& what) {
  if (std::isfinite(value)) std::printf("%-26s %12.5g  %-10s %s\n", key, value, unit, what.c_str());
  else std::printf("%-26s %12s  %-10s %s\n", key, "n/a", unit, what.c_str());
  std::fflush(stdout);
}

struct ChildRun {
  int exit_code = -1;
  double wall_s = 0.0, cpu_s = 0.0, peak_rss_mib = 0.0;
};

// Runs argv as a child process (stdout and stderr to `log`); wall time, CPU time and peak resident memory
// of the child and its descendants (wait4).
ChildRun RunChild(const std::vector<std::string>& argv, const std::string& log) {
  std::vector<char*> cargv;
  for (const auto& a : argv) cargv.push_back(const_cast<char*>(a.c_str()));
  cargv.push_back(nullptr);
  std::fflush(stdout);
  const Clock::time_point t0 = Clock::now();
  const pid_t pid = fork();
  if (pid < 0) throw OutputError("bench: cannot start a child process");
  if (pid == 0) {
    const int fd = open(log.c_str(), O_WRONLY | O_CREAT | O_APPEND, 0644);
    if (fd >= 0) {
      dup2(fd, STDOUT_FILENO);
      dup2(fd, STDERR_FILENO);
    }
    execvp(cargv[0], cargv.data());
    _exit(127);
  }
  int status = 0;
  struct rusage ru {};
  wait4(pid, &status, 0, &ru);
  if (WIFSIGNALED(status) && WTERMSIG(status) == SIGINT) throw BenchInterrupted{};  // Ctrl-C reached the child too
  ChildRun r;
  r.wall_s = Seconds(t0);
  r.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : 128 + (WIFSIGNALED(status) ? WTERMSIG(status) : 0);
  r.cpu_s = static_cast<double>(ru.ru_utime.tv_sec + ru.ru_stime.tv_sec) +
            1e-6 * static_cast<double>(ru.ru_utime.tv_usec + ru.ru_stime.tv_usec);
  r.peak_rss_mib = static_cast<double>(ru.ru_maxrss) / 1024.0;  // ru_maxrss is in KiB on Linux
  return r;
}

std::string SelfPath() {
  std::error_code ec;
  const fs::path p = fs::read_symlink("/proc/self/exe", ec);
  if (ec) throw OutputError("bench: cannot find the zeeline executable (/proc/self/exe)");
  return p.string();
}

void Simulate(const std::string& self, long nx, long ny, int points, const std::string& out, const std::string& log) {
  std::vector<std::string> a{self, "simulate", "--demo", "--nx", std::to_string(nx), "--ny", std::to_string(ny),
                             "--points", std::to_string(points), "--seed", "7", "-o", out, "--overwrite", "-q"};
  a.insert(a.end(), std::begin(kLineArgs), std::end(kLineArgs));
  const ChildRun r = RunChild(a, log);
  if (r.exit_code != 0) throw OutputError("bench: `zeeline simulate` failed (exit " + std::to_string(r.exit_code) + "); see " + log);
}

std::vector<std::string> MapArgs(const std::string& self, const std::string& cube, const std::string& method,
                                 int threads, const std::string& out) {
  std::vector<std::string> a{self, "map", cube, "--method", method, "--threads", std::to_string(threads), "-o", out,
                             "--overwrite", "-q"};
  a.insert(a.end(), std::begin(kLineArgs), std::end(kLineArgs));
  return a;
}

// Bare cfitsio read of the whole data unit (float, one spectral plane at a time): the floor under any reader.
double BareCfitsioRead(const std::string& path) {
  fitsfile* f = nullptr;
  int status = 0;
  const Clock::time_point t0 = Clock::now();
  fits_open_image(&f, path.c_str(), READONLY, &status);
  long naxes[4] = {1, 1, 1, 1};
  int naxis = 0;
  fits_get_img_dim(f, &naxis, &status);
  fits_get_img_size(f, 4, naxes, &status);
  const long plane = naxes[0] * naxes[1];
  std::vector<float> buf(static_cast<std::size_t>(plane));
  const long planes = naxes[2] * naxes[3];
  for (long k = 0; k < planes && status == 0; ++k) {
    int any_null = 0;
    fits_read_img(f, TFLOAT, k * plane + 1, plane, nullptr, buf.data(), &any_null, &status);
  }
  int close_status = 0;
  if (f) fits_close_file(f, &close_status);
  if (status != 0) throw FitsError(path + ": bench read failed, cfitsio status " + std::to_string(status));
  return Seconds(t0);
}

FieldMapOptions BenchMapOptions(MapMethod method, int threads) {
  FieldMapOptions o;
  o.method = method;
  o.rest_wavelength_nm = kLineNm;
  o.pattern = ComputeZeemanPattern(ParseLevel("5P1"), ParseLevel("5D0"));
  o.threads = threads;
  return o;
}

struct Timing {
  double wall_s = 0.0, cpu_s = 0.0;
};

// ComputeFieldMaps from opening the cube to the finished maps (no file written).
Timing LibraryMap(const std::string& cube, MapMethod method, int threads, FieldMaps& maps) {
  const Clock::time_point t0 = Clock::now();
  const double c0 = CpuSeconds();
  CubeReadOptions read;
  read.threads = threads;
  CubeReader reader(cube, read);
  const FieldMapOptions o = BenchMapOptions(method, threads);
  ComputeFieldMaps(reader, o, FieldMapRunOptions{}, maps);
  return {Seconds(t0), CpuSeconds() - c0};
}

// CPU microseconds of one synthesis (optionally with the Jacobian), over at least `budget_s` CPU seconds.
double SynthesisMicroseconds(int points, bool jacobian, double budget_s) {
  MeLine line;
  line.wavelength_nm = kLineNm;
  line.pattern = ComputeZeemanPattern(ParseLevel("5P1"), ParseLevel("5D0"));
  StokesSynthesizer synth({line}, UniformWavelengthGrid(kLineNm, 0.06, points));
  MeParameters p;
  p.field_gauss = 1200.0;
  p.inclination_deg = 40.0;
  p.azimuth_deg = 20.0;
  p.vlos_kms = 0.5;
  p.eta0 = 8.0;
  StokesArray stokes;
  StokesJacobian jac;
  long calls = 0;
  const double c0 = CpuSeconds();
  double elapsed = 0.0;
  do {
    for (int k = 0; k < 50; ++k) {
      p.vlos_kms = 0.5 + 1e-4 * static_cast<double>(k);  // a different pixel each call
      synth.Synthesize(p, stokes, jacobian ? &jac : nullptr);
    }
    calls += 50;
    elapsed = CpuSeconds() - c0;
  } while (elapsed < budget_s);
  return 1e6 * elapsed / static_cast<double>(calls);
}

std::vector<std::string> MpirunPrefix(int ranks) {
  // Unbound ranks: on a shared machine a rank pinned to a busy core would measure the neighbour, not us.
  std::vector<std::string> a{MpiLauncher(), "--oversubscribe", "--bind-to", "none"};
  if (geteuid() == 0) a.push_back("--allow-run-as-root");
  a.push_back("-np");
  a.push_back(std::to_string(ranks));
  return a;
}

void RunBench(const BenchArgs& a) {
  if (a.nx < 16 || a.ny < 16 || a.points < 16) throw OptionError("bench: --nx, --ny and --points must be >= 16");
  if (Parallel().mpi)
    throw OptionError("bench starts its own MPI runs: run `zeeline bench` as one process, not under mpirun");
  const std::string self = SelfPath();
  fs::path dir;
  bool remove_dir = false;
  if (!a.keep.empty()) {
    dir = a.keep;
    if (!fs::is_directory(dir)) throw OptionError("--keep " + a.keep + ": not an existing directory");
    for (const char* name : {"bench.log", "bench_cube.fits", "bench_cube_4x.fits", "bench_maps.fits"})
      if (fs::exists(dir / name) && !a.overwrite)
        throw OutputError((dir / name).string() + " exists; use --overwrite to replace it (nothing was written)");
    std::error_code ec;
    fs::remove(dir / "bench.log", ec);  // the log is appended to by every child run: start it afresh
  } else {
    std::string tmpl = (fs::temp_directory_path() / "zeeline-bench-XXXXXX").string();
    if (!mkdtemp(tmpl.data())) throw OutputError("bench: cannot create a temporary directory in " + fs::temp_directory_path().string());
    dir = tmpl;
    remove_dir = true;
  }
  struct Cleanup {
    fs::path d;
    bool on;
    ~Cleanup() {
      std::error_code ec;
      if (on) fs::remove_all(d, ec);
    }
  } cleanup{dir, remove_dir};
  InterruptGuard interrupt;  // the bench survives Ctrl-C long enough to remove its files (BenchInterrupted)
  auto stop_if_interrupted = [&interrupt] {
    if (interrupt.interrupted()) throw BenchInterrupted{};
  };
  const std::string log = (dir / "bench.log").string();
  const std::string cube = (dir / "bench_cube.fits").string();
  const long pixels = a.nx * a.ny;
  const int cores = static_cast<int>(std::thread::hardware_concurrency());
  double load[1] = {NAN};
  getloadavg(load, 1);

  Simulate(self, a.nx, a.ny, a.points, cube, log);
  const double file_mib = static_cast<double>(fs::file_size(cube)) / 1048576.0;
  const double decoded_mib = static_cast<double>(pixels) * a.points * 4 * 8 / 1048576.0;
  std::printf("# zeeline bench %s: key value unit description (docs/scaling.md); one core = one thread\n", ZEELINE_VERSION);
  std::printf("# cube: %ld x %ld pixels x %d wavelengths x 4 Stokes, Fe I 630.25 nm demo scene, files in %s%s\n",
              a.nx, a.ny, a.points, dir.string().c_str(), remove_dir ? " (removed at the end)" : "");
  Figure("host.cores", cores, "cores", "hardware threads of this machine");
  Figure("host.load_start", load[0], "-", "1-minute load average before the bench (figures assume an idle machine)");
  Figure("host.mpi", BuiltWithMpi() ? 1 : 0, "-", "1 = built with MPI");
  Figure("cube.pixels", static_cast<double>(pixels), "px", "spatial pixels");
  Figure("cube.wavelengths", a.points, "-", "wavelength samples");
  Figure("cube.file_mib", file_mib, "MiB", "FITS file (float32)");
  Figure("cube.decoded_mib", decoded_mib, "MiB", "the cube as doubles in memory");

  // Forward model: what one Levenberg-Marquardt step of the inversion costs.
  const double budget = a.quick ? 0.05 : 0.3;
  Figure("synth.profile_us", SynthesisMicroseconds(a.points, false, budget), "us", "one I,Q,U,V synthesis, CPU time");
  Figure("synth.jacobian_us", SynthesisMicroseconds(a.points, true, budget), "us", "the same with the Jacobian (9 parameters)");

  // Reading: bare cfitsio, then the reader the maps use. Each read follows a first one, so the file is in
  // the page cache for both.
  BareCfitsioRead(cube);
  const double bare_s = BareCfitsioRead(cube);
  Figure("read.cfitsio_s", bare_s, "s", "bare cfitsio read of the data unit (fits_read_img, float)");
  Figure("read.cfitsio_mib_per_s", file_mib / bare_s, "MiB/s", "the same as a rate");
  {
    const Clock::time_point t0 = Clock::now();
    CubeReadOptions read;
    read.threads = 1;
    CubeReader reader(cube, read);
    RawCubeTile tile;
    for (long y = 0; y < reader.info().ny; y += reader.rows_per_tile())
      reader.ReadRowsRaw(y, std::min(reader.rows_per_tile(), reader.info().ny - y), tile);
    Figure("read.tiles_s", Seconds(t0), "s", "CubeReader, every tile as map reads them (file order, ReadRowsRaw)");
  }

  // The library's map runs (no output file).
  FieldMaps maps;
  stop_if_interrupted();
  const Timing wfa = LibraryMap(cube, MapMethod::kWeakField, 1, maps);
  stop_if_interrupted();
  const double wfa_s = wfa.wall_s;
  Figure("wfa.map_s", wfa_s, "s", "ComputeFieldMaps --method wfa, 1 thread, open to finished maps");
  Figure("wfa.px_per_s_core", static_cast<double>(pixels) / wfa.cpu_s, "px/s", "weak field, pixels per CPU second");
  Figure("wfa.over_read", wfa_s / bare_s, "x", "wfa.map_s / read.cfitsio_s");
  const Timing me1 = LibraryMap(cube, MapMethod::kMilneEddington, 1, maps);
  stop_if_interrupted();
  const double me1_s = me1.wall_s;
  Figure("me.map_s", me1_s, "s", "ComputeFieldMaps --method me, 1 thread");
  Figure("me.px_per_s_core", static_cast<double>(pixels) / me1.cpu_s, "px/s", "Milne-Eddington, pixels per CPU second");
  Figure("me.iterations_per_px", static_cast<double>(maps.me_iterations) / static_cast<double>(pixels), "-",
         "Levenberg-Marquardt trial steps per pixel");
  const double me2_s = LibraryMap(cube, MapMethod::kMilneEddington, 2, maps).wall_s;
  stop_if_interrupted();
  Figure("me.map_2threads_s", me2_s, "s", "the same with 2 threads");
  Figure("me.threads2_speedup", me1_s / me2_s, "x", "me.map_s / me.map_2threads_s (ideal 2)");

  // Whole `zeeline map` processes: peak memory and wall time including start-up and the output file.
  const std::string out = (dir / "bench_maps.fits").string();
  auto map_child = [&](const std::vector<std::string>& args, const char* what) {
    const ChildRun r = RunChild(args, log);
    if (r.exit_code != 0)
      throw OutputError(std::string("bench: ") + what + " failed (exit " + std::to_string(r.exit_code) + "); see " + log);
    return r;
  };
  const ChildRun wfa_run = map_child(MapArgs(self, cube, "wfa", 1, out), "zeeline map --method wfa");
  Figure("rss.map_wfa_mib", wfa_run.peak_rss_mib, "MiB", "peak resident memory of `zeeline map --method wfa`");
  {
    // Four times the pixels: memory follows one tile (64 MiB by default, two in flight), not the cube.
    const std::string big = (dir / "bench_cube_4x.fits").string();
    Simulate(self, 2 * a.nx, 2 * a.ny, a.points, big, log);
    Figure("rss.big_cube_decoded_mib", 4.0 * decoded_mib, "MiB", "a cube of 4x the pixels, as doubles");
    const ChildRun big_run = map_child(MapArgs(self, big, "wfa", 1, out), "zeeline map --method wfa (4x cube)");
    Figure("rss.big_map_wfa_mib", big_run.peak_rss_mib, "MiB", "peak resident memory of the same on it");
    fs::remove(big);
  }
  const ChildRun me_run = map_child(MapArgs(self, cube, "me", 1, out), "zeeline map --method me");
  Figure("process.me_s", me_run.wall_s, "s", "`zeeline map --method me --threads 1`, one process, wall time");
  Figure("rss.map_me_mib", me_run.peak_rss_mib, "MiB", "its peak resident memory");

  if (!BuiltWithMpi()) {
    const std::pair<const char*, const char*> keys[] = {{"mpi.launch_s", "s"}, {"mpi.ranks1_s", "s"}, {"mpi.ranks2_s", "s"},
        {"mpi.ranks2_speedup", "x"}, {"mpi.ranks2_vs_process", "x"}, {"mpi.ranks1_cpu_s", "s"}, {"mpi.ranks2_cpu_s", "s"}};
    for (const auto& [key, unit] : keys) Figure(key, NAN, unit, "built without MPI");
  } else {
    std::vector<std::string> launch = MpirunPrefix(2);
    launch.insert(launch.end(), {self, "--version"});
    Figure("mpi.launch_s", map_child(launch, "mpirun -np 2 zeeline --version").wall_s, "s",
           "`mpirun -np 2 zeeline --version`: start-up and shut-down of two ranks doing nothing");
    std::vector<std::string> r1 = MpirunPrefix(1), r2 = MpirunPrefix(2);
    const auto me_args = MapArgs(self, cube, "me", 1, out);
    r1.insert(r1.end(), me_args.begin(), me_args.end());
    r2.insert(r2.end(), me_args.begin(), me_args.end());
    const ChildRun one = map_child(r1, "mpirun -np 1 zeeline map --method me");
    const ChildRun two = map_child(r2, "mpirun -np 2 zeeline map --method me");
    Figure("mpi.ranks1_s", one.wall_s, "s", "`mpirun -np 1 zeeline map --method me --threads 1`, wall time");
    Figure("mpi.ranks2_s", two.wall_s, "s", "the same with -np 2 (2 ranks x 1 thread)");
    Figure("mpi.ranks2_speedup", one.wall_s / two.wall_s, "x", "mpi.ranks1_s / mpi.ranks2_s (ideal 2)");
    Figure("mpi.ranks2_vs_process", me_run.wall_s / two.wall_s, "x",
           "process.me_s / mpi.ranks2_s (start-up of mpirun included)");
    Figure("mpi.ranks1_cpu_s", one.cpu_s, "s", "CPU time of the -np 1 run (mpirun included)");
    Figure("mpi.ranks2_cpu_s", two.cpu_s, "s", "CPU time of the -np 2 run, all processes");
  }
  double load_end[1] = {NAN};
  getloadavg(load_end, 1);
  Figure("host.load_end", load_end[0], "-", "1-minute load average after the bench");
}

}  // namespace

void AddBenchCommand(CLI::App& app) {
  auto a = std::make_shared<BenchArgs>();
  auto* cmd = app.add_subcommand("bench", "Speed and memory figures of this machine (synthesis, reading, wfa, me, threads, MPI ranks)");
  cmd->footer(
      "Prints one figure per line: key, value, unit, description (docs/scaling.md lists the keys).\n"
      "Run it on an otherwise idle machine; it takes about two minutes with the defaults.\n"
      "Examples:\n"
      "  zeeline bench\n"
      "  zeeline bench --quick\n"
      "  zeeline bench --nx 200 --ny 200 --points 60 --keep /scratch/bench");
  cmd->add_option("--nx", a->nx, "bench cube width in pixels")->capture_default_str();
  cmd->add_option("--ny", a->ny, "bench cube height in pixels")->capture_default_str();
  cmd->add_option("--points", a->points, "wavelength samples")->capture_default_str();
  cmd->add_flag("--quick", a->quick, "a 24 x 24 x 48 cube: a few seconds, for a smoke test");
  cmd->add_option("--keep", a->keep, "write the bench files into this existing directory and keep them");
  cmd->add_flag("--overwrite", a->overwrite, "with --keep: replace bench files already in the directory");
  cmd->callback([a] {
    BenchArgs args = *a;
    if (args.quick) {
      args.nx = args.ny = 24;
      args.points = 48;
    }
    try {
      RunBench(args);
    } catch (const BenchInterrupted&) {
      std::fprintf(stderr, "\nzeeline: bench interrupted%s\n",
                   args.keep.empty() ? "; its temporary files were removed" : "");
      std::exit(130);
    }
  });
}

}  // namespace zeeline::cli
