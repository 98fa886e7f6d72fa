// zeeline/maps/field_maps.hpp -- field maps from a Stokes cube: per-pixel method choice, streaming over
// tiles, threads, checkpoints.
//
// For every spatial pixel the cube's spectra go through the estimators of this area:
//   wfa    weak-field approximation (weak_field.hpp): B_LOS, B_TRANS, B_AZIM (+ V_LOS from the centroid)
//   cog    centre of gravity (centre_of_gravity.hpp): B_LOS, V_LOS
//   split  resolved splitting (full_splitting.hpp): B_TOTAL, V_LOS; B_LOS from cog; B_INCL from both;
//          B_AZIM from the linear-polarisation regression of the weak-field fit (angle only)
//   me     Milne-Eddington inversion (me_inversion.hpp) of I, Q, U, V over the whole spectral axis, started
//          from the wfa/cog estimates; all maps with errors from the covariance, CHI2 = reduced chi2;
//          QUALITY NOT_CONVERGED / BAD_FIT from the fit. Extra lines (extra_lines) share B, angles, vlos and
//          the thermodynamics with the main line.
//   auto   per pixel, the regime decision of weak_field_regime.hpp (splitting ratio from saturation-proof estimates and
//          the chi2 shape test of the weak-field model): weak -> wfa; otherwise, when the cube has Q, U and V and auto_me is set (the default),
//          me (started from the splitting fit's |B| when that is resolved); without them, split if the
//          sigma groups are resolved, else cog for B_LOS/V_LOS with the weak-field transverse field flagged
//          OUT_OF_RANGE.
// Disambiguation (disambiguate = true, disambiguation.hpp): after all pixels, the B_AZIM map is turned into
// [0, 360) by the acute-angle rule against the potential field of B_LOS, and FieldMaps::disambiguation holds
// a flag per pixel (DisambiguationFlag). Without it B_AZIM is in [0, 180).
// Every pixel gets a METHOD code (map_method.hpp) and QUALITY bits (io/quality_flags.hpp): a pixel failing the
// data-sanity check (data_sanity.hpp: NaN/Inf, absurd values, continuum I <= 0, |Q|,|U|,|V| > I) gets NaN maps
// and the matching bits, is not inverted, and its neighbours are untouched; when no pixel passes, FitsError
// "no usable pixel" is thrown after the run; a pixel whose |B_LOS|
// and B_TRANS are both below detection_sigma times their errors gets LOW_SIGNAL; an estimate outside its
// method's validity gets OUT_OF_RANGE.
// The cube is read tile by tile (io/cube_reader.hpp). Without a sink, memory holds one tile plus the whole
// 2-D maps (58 bytes per pixel). With a sink (FieldMapRunOptions::sink; `zeeline map` writes the rows straight
// into its output file) each finished tile's rows go to the sink and memory holds two tiles (the next one is
// read while the current one is computed) and the tile's maps, whatever the cube size; only the maps that the
// end of the run needs whole stay: B_LOS, B_TRANS, B_TRANS_SIGMA and B_AZIM with disambiguate (16 bytes per
// pixel, WholeMapSlots), none otherwise.
// Checkpoints: after every tile the finished rows can be saved (checkpoint_path) and a later run with
// resume = true continues from them, giving the same maps as an uninterrupted run (the computation of a
// pixel depends on that pixel only). Without a sink the checkpoint holds the maps of the finished rows
// (rewritten after every tile); with a sink it holds only the row count and the counts of FieldMaps (a few
// hundred bytes) and the sink keeps the rows (Sync before every checkpoint).
#pragma once

#include <atomic>
#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "zeeline/atomic/paschen_back.hpp"
#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/io/cube_reader.hpp"
#include "zeeline/maps/centre_of_gravity.hpp"
#include "zeeline/maps/disambiguation.hpp"
#include "zeeline/maps/map_method.hpp"
#include "zeeline/maps/me_inversion.hpp"
#include "zeeline/maps/weak_field.hpp"

namespace zeeline {

/// The maps a run produces, in the order they are written.
enum MapSlot : int {
  kSlotField,
  kSlotFieldErr,
  kSlotInclination,
  kSlotInclinationErr,
  kSlotAzimuth,
  kSlotAzimuthErr,
  kSlotBlos,
  kSlotBlosErr,
  kSlotBtrans,
  kSlotBtransErr,
  kSlotVlos,
  kSlotVlosErr,
  kSlotChi2,
  kSlotCount
};
/// EXTNAME of a slot ("B_TOTAL", "B_TOTAL_SIGMA", ...).
const char* MapSlotName(int slot);

struct FieldMapOptions {
  MapMethod method = MapMethod::kAuto;
  double rest_wavelength_nm = 0.0;   ///< required, in the frame of the data's wavelength grid
  ZeemanPattern pattern;             ///< g_eff and G of the line (pattern.g_eff must be non-zero)
  double window_halfwidth_nm = 0.0;  ///< fit window around the rest wavelength; 0 = from the line width
  double continuum_exclude_nm = 0.0; ///< continuum = samples farther than this from the line; 0 = auto
  double noise_rel = 0.0;            ///< noise in units of the continuum; 0 = measured per pixel
  TransverseRegion transverse = TransverseRegion::kCorrected;
  double core_halfwidth_nm = 0.0;    ///< weak-field transverse core region (0 = whole window)
  double wing_start_nm = 0.0;        ///< weak-field transverse wing region start (0 = 4.8 Doppler widths)
  double weak_ratio = kDefaultWeakRatio;  ///< splitting/Doppler width below which the weak-field answer is used (auto) / valid (wfa)
  double consistency_sigma = 5.0;    ///< weak-field chi2 shape test threshold (weak_field_regime.hpp)
  /// LOW_TRANSVERSE below this many sigma of B_T^2 (weak-field or ME pixels; 0 = never).
  double transverse_detection = kDefaultTransverseDetection;
  /// Model accuracy (fraction of B_T) of the saturation-corrected weak-field B_T, in quadrature with its noise
  /// error (weak_field.hpp); 0 = noise only; at most 0.2. LOW_SIGNAL tests B_T against its noise alone.
  double transverse_model_error = WeakFieldOptions{}.corrected_model_error;
  /// Model error of the centre-of-gravity B_LOS, fraction of |B_LOS|, in its sigma (centre_of_gravity.hpp).
  double cog_model_error = CentreOfGravityOptions{}.model_error;
  double resolution_ratio = 1.0;     ///< splitting/width above which sigma groups count as resolved
  /// Set: the split estimator's |B| beyond the linear regime (full_splitting.hpp) above mixed_from_gauss.
  std::shared_ptr<const SigmaSplittingTable> mixed_splitting;
  double mixed_from_gauss = 0.0;
  double detection_sigma = 3.0;      ///< LOW_SIGNAL below this many sigma in both B_LOS and B_TRANS
  bool need_transverse = false;      ///< refuse cubes without Q and U (the caller asked for B_TRANS)
  int threads = 0;                   ///< 0 = all available (OpenMP)
  // Milne-Eddington inversion (method me, and auto in the intermediate regime).
  MeInversionOptions me;             ///< free/fixed parameters, bounds, Stokes weights, restarts, tolerances
  std::vector<MeLine> extra_lines;   ///< further lines in the window (relative_strength fixed, see me_inversion.hpp)
  bool auto_me = true;               ///< auto may choose me where wfa and split are both invalid
  // Azimuth disambiguation after the run.
  bool disambiguate = false;
  DisambiguationOptions disambiguation;

  std::string Validate() const;
};

struct FieldMaps {
  long nx = 0, ny = 0;
  std::vector<std::vector<float>> slots;  ///< kSlotCount maps of nx*ny (y-major: y * nx + x)
  std::vector<std::int16_t> method;       ///< MapMethod code per pixel
  std::vector<std::int32_t> quality;      ///< QualityBit flags per pixel
  bool has_transverse = false;            ///< the cube had Q and U
  long rows_done = 0;
  std::int64_t method_counts[5] = {0, 0, 0, 0, 0};  ///< pixels per MapMethod code
  std::vector<std::int16_t> disambiguation;         ///< DisambiguationFlag per pixel; empty unless disambiguated
  std::int64_t me_iterations = 0;                   ///< LM trial steps summed over the ME pixels
  // Counts over the finished rows, like method_counts (kept in checkpoints; TallyRows):
  std::int64_t flagged_pixels = 0;  ///< pixels with any QUALITY bit
  std::int64_t usable_pixels = 0;   ///< pixels that passed the data-sanity check (data_sanity.hpp)
  /// Pixels failing it, by cause: NaN/Inf samples, absurd values, continuum I <= 0, |Q|,|U|,|V| > I.
  std::int64_t rejected_pixels[4] = {0, 0, 0, 0};
  std::uint32_t slots_with_values = 0;  ///< bit k set: map slot k has a finite value somewhere
  /// Continuum samples of the layout: without a given noise level each pixel's noise (and so every error
  /// bar) comes from these (pixel_spectrum.hpp); few of them make the error bars themselves uncertain.
  std::size_t continuum_samples = 0;
  /// Wall-clock seconds of this run (not kept in checkpoints): reading tiles (cfitsio + reorder) in all,
  /// the part of it the estimators waited for (the rest ran behind the computation), the estimators, and
  /// handing finished rows to the sink.
  double read_seconds = 0.0, read_wait_seconds = 0.0, compute_seconds = 0.0, sink_seconds = 0.0;
};

/// Below this many continuum samples a map's per-pixel noise estimate (second differences within each run of
/// consecutive continuum samples, pixel_spectrum.hpp) scatters enough to widen the pulls of its errors
/// visibly: measured on 400 field-free Milne–Eddington pixels (eta0 20, damping 0.15, 60 samples over 0.06 nm,
/// noise 1e-3, `--continuum-exclude` setting the count) the B_LOS pull sd was 1.43 from 12 continuum samples
/// (sigma scattering by 34 %), 1.05 from 24, 1.01 from 36 and 0.96 with the noise given. `map` warns below it.
constexpr std::size_t kFewContinuumSamples = 16;

/// Adds the counts of rows [row_begin, row_begin + rows) of `m` (QUALITY and the map slots; row indices of
/// `m`) to flagged_pixels, usable_pixels, rejected_pixels and slots_with_values of `into` (may be `m`).
void TallyRows(const FieldMaps& m, long row_begin, long rows, FieldMaps& into);
/// Adds every count of `from` (method_counts, me_iterations and those of TallyRows) to `into`.
void AddCounts(const FieldMaps& from, FieldMaps& into);

/// The map slots the end of a run needs whole (FieldMapEngine::Finish): B_LOS, B_TRANS, B_TRANS_SIGMA and
/// B_AZIM for the azimuth disambiguation, nothing otherwise. With a sink only these stay in memory.
std::vector<int> WholeMapSlots(const FieldMapOptions& options);

/// Where finished rows go instead of whole maps in memory (FieldMapRunOptions::sink): `zeeline map` writes
/// them into its output file as they come (src/cli/map_file_sink.hpp).
class FieldMapSink {
 public:
  virtual ~FieldMapSink() = default;
  /// Called once, before any Put: rows [0, rows_done) were finished by an earlier run (checkpoint; 0 = a
  /// fresh run). Resuming, the sink fills the rows [0, rows_done) of maps.slots[k] for k in WholeMapSlots
  /// from what it kept.
  virtual void Begin(long rows_done, FieldMaps& maps) = 0;
  /// Rows [first_row, first_row + block.ny) are finished (block: their maps, nx = the cube's). Rows come
  /// in any order (the MPI driver), each once per run. ComputeFieldMaps may call Put on a thread of its own
  /// while it computes the next tile (with more than one thread and no checkpoints), never two at once and
  /// never at the same time as Begin or Sync.
  virtual void Put(const FieldMaps& block, long first_row) = 0;
  /// Makes every row Put so far survive the end of this process: called before each checkpoint names them.
  virtual void Sync() = 0;
};

struct FieldMapRunOptions {
  std::string checkpoint_path;  ///< empty = no checkpoints
  bool resume = false;          ///< continue from checkpoint_path if it exists and matches
  std::string fingerprint;      ///< identifies input + options; a checkpoint with another one is refused
  const std::atomic<bool>* cancel = nullptr;           ///< checked between tiles
  std::function<void(long rows_done, long rows)> progress;  ///< called after each tile
  /// Set: finished rows go to the sink, and the FieldMaps of the run keep the counts, nx/ny and the
  /// WholeMapSlots only (method and quality stay empty). Not owned.
  FieldMapSink* sink = nullptr;
};

enum class RunStatus { kComplete, kCancelled };

/// Runs the estimators over the whole cube (into `maps`, or through run.sink). Throws OptionError for invalid options, FitsError for
/// read problems and for a cube that lacks what the options need (naming the file and the Stokes axis).
RunStatus ComputeFieldMaps(CubeReader& reader, const FieldMapOptions& options, const FieldMapRunOptions& run,
                           FieldMaps& maps);

// ---- The pieces of ComputeFieldMaps, for drivers that hand out tiles themselves (the MPI driver,
// src/mpi/distributed_maps.cpp). ComputeFieldMaps is built from the same pieces, so a pixel's result does
// not depend on how the rows were split.

/// The spectral choices made once per run: fit window and continuum samples (from the first tile).
/// Chosen once per cube from the first tile; under MPI rank 0 chooses and broadcasts every member
/// (src/mpi/distributed_maps.cpp BroadcastLayout: a new member must be added there).
struct SpectralLayout {
  double window_halfwidth_nm = 0.0;
  std::vector<std::size_t> continuum;  ///< indices into the wavelength grid
  double median_level = 0.0;           ///< the cube's median |I| (data_sanity.hpp MedianLevel); 0 = no ceiling
};

class FieldMapEngine {
 public:
  /// Validates the options against the cube: throws OptionError / FitsError like ComputeFieldMaps.
  /// `info` and `options` are kept by reference and must outlive the engine.
  FieldMapEngine(const CubeInfo& info, const FieldMapOptions& options);
  ~FieldMapEngine();
  FieldMapEngine(const FieldMapEngine&) = delete;
  FieldMapEngine& operator=(const FieldMapEngine&) = delete;

  /// The layout ComputeFieldMaps uses: from the spatially averaged I of the reader's first tile (so a
  /// resumed or distributed run makes the same choices). Either this or set_layout before Compute.
  void ChooseLayout(CubeReader& reader);
  /// The same from the reader's first tile (rows [0, rows_per_tile)) when the caller has read it already.
  void ChooseLayout(const RawCubeTile& first_tile);
  void set_layout(SpectralLayout layout) { layout_ = std::move(layout); }
  const SpectralLayout& layout() const { return layout_; }
  const FieldMapOptions& options() const { return o_; }

  /// Fresh maps of rows [row_begin, row_begin + rows): NaN maps, method 0, QUALITY MASKED; nx from the
  /// cube, ny = rows.
  void InitMaps(long rows, FieldMaps& maps) const;
  /// The FieldMaps of a run with a sink: nx, ny of the cube, zero counts, the WholeMapSlots (NaN) only.
  void InitSinkMaps(FieldMaps& maps) const;
  /// Computes every pixel of `tile` into `maps`, whose first row is cube row `first_row` (0 for maps of the
  /// whole cube); adds to method_counts and me_iterations. OpenMP threads as FieldMapOptions::threads.
  void Compute(const CubeTile& tile, FieldMaps& maps, long first_row = 0) const;
  /// The same from a file-order tile (CubeReader::ReadRowsRaw): each worker gathers its pixel's spectra
  /// (RawCubeTile::Gather), with no reorder pass over the tile; identical results.
  void Compute(const RawCubeTile& tile, FieldMaps& maps, long first_row = 0) const;
  /// The steps that need the whole map, run once after every pixel is in: FitsError "no usable pixel" when
  /// every pixel failed the data-sanity check (data_sanity.hpp; from maps.quality when it holds the whole
  /// map, else from the counts of TallyRows), then the azimuth disambiguation (of the WholeMapSlots).
  void Finish(FieldMaps& maps) const;

 private:
  void CheckRows(long y_begin, long y_count, long nx, const FieldMaps& maps, long first_row) const;
  template <class Source>
  void ComputePixels(const Source& source, long y0, FieldMaps& maps) const;

  const CubeInfo& info_;
  const FieldMapOptions& o_;
  int si_ = -1, sq_ = -1, su_ = -1, sv_ = -1;
  bool has_qu_ = false, has_v_ = false;
  std::unique_ptr<MeInverter> inverter_;
  SpectralLayout layout_;
};

/// Checkpoint files of ComputeFieldMaps (rows [0, maps.rows_done) of the maps), written to a temporary
/// file and renamed. Load returns false when the file does not exist and throws FitsError when it was made
/// from another input or other options (fingerprint), or does not match the maps' size.
void SaveFieldMapCheckpoint(const std::string& path, const std::string& fingerprint, const FieldMaps& maps);
bool LoadFieldMapCheckpoint(const std::string& path, const std::string& fingerprint, FieldMaps& maps);
/// The checkpoint of a run with a sink: rows_done and the counts of `maps` only (the sink keeps the rows).
/// The two kinds are told apart by their first bytes; loading one as the other throws FitsError.
void SaveFieldMapSinkCheckpoint(const std::string& path, const std::string& fingerprint, const FieldMaps& maps);
bool LoadFieldMapSinkCheckpoint(const std::string& path, const std::string& fingerprint, FieldMaps& maps);

}  // namespace zeeline
