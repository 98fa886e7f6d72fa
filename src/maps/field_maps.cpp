#include "zeeline/maps/field_maps.hpp"

#include <fitsio.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <future>
#include <limits>
#include <memory>
#include <sstream>

#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/threads.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/io/quality_flags.hpp"
#include "zeeline/maps/centre_of_gravity.hpp"
#include "zeeline/maps/data_sanity.hpp"
#include "zeeline/maps/field_vector.hpp"
#include "zeeline/maps/full_splitting.hpp"
#include "zeeline/maps/pixel_spectrum.hpp"
#include "zeeline/maps/weak_field_regime.hpp"

namespace zeeline {
namespace {

constexpr double kRadToDeg = 180.0 / constants::kPi;
const float kNaN = std::numeric_limits<float>::quiet_NaN();

// Line window and continuum samples derived once from the wavelength grid (and, when not given, from the
// spatially averaged I of the first tile).
SpectralLayout ChooseLayout(const std::vector<double>& wl, const std::vector<double>& mean_I,
                            const FieldMapOptions& o) {
  SpectralLayout lay;
  const std::size_t n = wl.size();
  const double half_range = 0.5 * (wl.back() - wl.front());
  double window = o.window_halfwidth_nm;
  if (window <= 0.0) {
    // Continuum guess from the outer 10 % on each side; the line extends to where |Ic - I| drops below 2 %
    // of its maximum; the window is 1.3 times that, at most 90 % of the half range.
    const std::size_t edge = std::max<std::size_t>(2, n / 10);
    double ic = 0.0;
    for (std::size_t i = 0; i < edge; ++i) ic += mean_I[i] + mean_I[n - 1 - i];
    ic /= static_cast<double>(2 * edge);
    double max_depth = 0.0;
    for (std::size_t i = 0; i < n; ++i) max_depth = std::max(max_depth, std::fabs(ic - mean_I[i]));
    double extent = 0.0;
    for (std::size_t i = 0; i < n; ++i)
      if (std::fabs(ic - mean_I[i]) > 0.02 * max_depth)
        extent = std::max(extent, std::fabs(wl[i] - o.rest_wavelength_nm));
    window = std::min(std::max(1.3 * extent, 3.0 * (wl[1] - wl[0])), 0.9 * half_range);
  }
  lay.window_halfwidth_nm = window;
  const double exclude = o.continuum_exclude_nm > 0.0 ? o.continuum_exclude_nm : window;
  lay.continuum = ContinuumSamples(wl.data(), n, o.rest_wavelength_nm, exclude);
  if (lay.continuum.size() < 4) {
    lay.continuum.clear();
    const std::size_t edge = std::max<std::size_t>(2, n / 10);
    for (std::size_t i = 0; i < edge; ++i) {
      lay.continuum.push_back(i);
      lay.continuum.push_back(n - 1 - i);
    }
  }
  return lay;
}

struct PixelOut {
  float v[kSlotCount];
  std::int16_t method = 0;
  std::int32_t quality = 0;
  int me_iterations = 0;
};

float FiniteOrNaN(double x) { return std::isfinite(x) ? static_cast<float>(x) : kNaN; }

// 1/e half-width of the line from the second moment of |Ic - I| in the window.
double LineHalfWidth(const PixelSpectrum& s, double ic, double centre, double window) {
  double m0 = 0.0, m1 = 0.0;
  for (std::size_t i = 0; i < s.n; ++i) {
    if (std::fabs(s.wavelength_nm[i] - centre) > window) continue;
    const double d = std::fabs(ic - s.I[i]);
    m0 += d;
    m1 += d * s.wavelength_nm[i];
  }
  if (!(m0 > 0.0)) return std::nan("");
  const double c = m1 / m0;
  double m2 = 0.0;
  for (std::size_t i = 0; i < s.n; ++i) {
    if (std::fabs(s.wavelength_nm[i] - centre) > window) continue;
    m2 += std::fabs(ic - s.I[i]) * (s.wavelength_nm[i] - c) * (s.wavelength_nm[i] - c);
  }
  return std::sqrt(2.0 * m2 / m0);
}

// All maps of a B_LOS + B_T answer; |B| and inclination with the errors of field_vector.hpp.
void SetVector(PixelOut& out, double blos, double blos_err, double bt, double bt_err, double bt_sq_err) {
  out.v[kSlotBlos] = static_cast<float>(blos);
  out.v[kSlotBlosErr] = static_cast<float>(blos_err);
  out.v[kSlotBtrans] = static_cast<float>(bt);
  out.v[kSlotBtransErr] = static_cast<float>(bt_err);
  const FieldVector f = ComposeFieldVector(blos, blos_err, bt, bt_err, bt_sq_err);
  out.v[kSlotField] = static_cast<float>(f.field_gauss);
  out.v[kSlotFieldErr] = static_cast<float>(f.field_err_gauss);
  out.v[kSlotInclination] = FiniteOrNaN(f.inclination_deg);
  out.v[kSlotInclinationErr] = FiniteOrNaN(f.inclination_err_deg);
}

class PixelProcessor {
 public:
  // `wavelength_nm[0..n)`: the grid of every pixel this processor sees (the estimators' grid-only work is
  // done here, once).
  PixelProcessor(const FieldMapOptions& o, const SpectralLayout& lay, bool has_qu, bool has_v, const MeInverter* me,
                 const double* wavelength_nm, std::size_t n)
      : o_(o), lay_(lay), has_qu_(has_qu), has_v_(has_v), me_(me) {
    wfa_.rest_wavelength_nm = o.rest_wavelength_nm;
    wfa_.g_eff = o.pattern.g_eff;
    wfa_.G = o.pattern.G;
    wfa_.window_halfwidth_nm = lay.window_halfwidth_nm;
    wfa_.transverse = o.transverse;
    wfa_.core_halfwidth_nm = o.core_halfwidth_nm;
    wfa_.wing_start_nm = o.wing_start_nm;
    wfa_.corrected_model_error = o.transverse_model_error;
    cog_.rest_wavelength_nm = o.rest_wavelength_nm;
    cog_.g_eff = o.pattern.g_eff;
    cog_.window_halfwidth_nm = lay.window_halfwidth_nm;
    cog_.model_error = o.cog_model_error;
    split_.rest_wavelength_nm = o.rest_wavelength_nm;
    split_.g_eff = o.pattern.g_eff;
    split_.window_halfwidth_nm = lay.window_halfwidth_nm;
    split_.resolution_ratio = o.resolution_ratio;
    split_.mixed_regime = o.mixed_splitting;
    split_.mixed_from_gauss = o.mixed_from_gauss;
    regime_.weak_ratio = o.weak_ratio;
    regime_.consistency_sigma = o.consistency_sigma;
    regime_.explain = false;  // the map keeps verdicts, not their wording
    PrepareWeakFieldGrid(wavelength_nm, n, wfa_, wfa_work_);
    cog_work_.Prepare(wavelength_nm, n, cog_);
  }

  // `rejected`: QUALITY bits of the data-sanity check (data_sanity.hpp); such a pixel is not inverted. `c`: the
  // continuum estimate that check made (used only when rejected is 0).
  void Process(const PixelSpectrum& s, std::uint32_t rejected, const ContinuumEstimate& c, PixelOut& out) {
    for (float& x : out.v) x = kNaN;
    out.method = 0;
    out.quality = 0;
    out.me_iterations = 0;
    if (rejected) {
      out.quality = static_cast<std::int32_t>(rejected);
      return;
    }
    if (!std::isfinite(c.continuum)) {
      out.quality = kQualityNoContinuum;
      return;
    }
    const WeakFieldResult w = WeakFieldEstimatePrepared(s, c, wfa_, wfa_work_);
    CentreOfGravityResult g;
    if (has_v_) g = CentreOfGravityEstimatePrepared(s, c, cog_, cog_work_);

    MapMethod m = o_.method;
    bool out_of_range = false;
    SplittingResult sp;
    SplitCheck split_check;
    WeakFieldRegime regime;
    if (m == MapMethod::kAuto || m == MapMethod::kWeakField || m == MapMethod::kMilneEddington) {
      // One regime decision for map and measure (weak_field_regime.hpp): a strength scale and a Doppler width that
      // saturation does not bias, and the chi2 test of the weak-field model against the observed shapes.
      // The second-moment width is only the fallback when the core shape could not be read.
      const double fallback =
          w.core.ok ? std::nan("") : LineHalfWidth(s, c.continuum, o_.rest_wavelength_nm, lay_.window_halfwidth_nm);
      regime = AssessWeakFieldRegime(w, has_v_ ? &g : nullptr, o_.pattern.g_eff, o_.rest_wavelength_nm, o_.transverse,
                            fallback, regime_);
      if (m == MapMethod::kMilneEddington) {
        // no choice to make
      } else if (m == MapMethod::kWeakField) {
        out_of_range = !regime.ratio_ok;
        if (!regime.v_consistent || !regime.qu_consistent) out.quality |= kQualityModelMismatch;
        if (regime.saturated_textbook) out.quality |= kQualitySaturatedLine;
      } else if (regime.weak) {
        m = MapMethod::kWeakField;
        if (regime.saturated_textbook) out.quality |= kQualitySaturatedLine;
      } else {
        sp = FullSplittingEstimate(s, c, split_);  // also the inversion's starting |B| when resolved
        split_check = CheckSplit(sp, has_v_ ? &g : nullptr, o_.resolution_ratio);
        if (me_ && o_.auto_me && has_qu_ && has_v_) {
          // Full Stokes beyond the weak-field regime: the inversion models intermediate and resolved
          // splitting alike, and unlike the splitting fit it is not misled by saturated line cores.
          m = MapMethod::kMilneEddington;
        } else if (split_check.valid) {
          m = MapMethod::kSplitting;
        } else {
          m = has_v_ ? MapMethod::kCentreOfGravity : MapMethod::kWeakField;
          out_of_range = !has_v_;
        }
      }
    } else if (m == MapMethod::kSplitting) {
      sp = FullSplittingEstimate(s, c, split_);
      split_check = CheckSplit(sp, has_v_ ? &g : nullptr, o_.resolution_ratio);
      out_of_range = !split_check.resolved;
      if (split_check.inconsistent) out.quality |= kQualityInconsistent;
    }
    out.method = static_cast<std::int16_t>(m);

    switch (m) {
      case MapMethod::kWeakField:
        if (w.has_btrans && w.has_blos) {
          SetVector(out, w.blos_gauss, w.blos_err_gauss, w.btrans_gauss, w.btrans_err_gauss, w.btrans_sq_err_gauss2);
        } else if (w.has_btrans) {
          // No B_LOS (no Stokes V): |B| and the inclination are unknown, not B_T and 90 deg.
          out.v[kSlotBtrans] = static_cast<float>(w.btrans_gauss);
          out.v[kSlotBtransErr] = static_cast<float>(w.btrans_err_gauss);
        } else if (w.has_blos) {
          out.v[kSlotBlos] = static_cast<float>(w.blos_gauss);
          out.v[kSlotBlosErr] = static_cast<float>(w.blos_err_gauss);
        }
        break;
      case MapMethod::kCentreOfGravity:
        if (g.ok) {
          out.v[kSlotBlos] = static_cast<float>(g.blos_gauss);
          out.v[kSlotBlosErr] = static_cast<float>(g.blos_err_gauss);
        }
        if (o_.method == MapMethod::kAuto && w.has_btrans && g.ok) {
          // Auto fallback: transverse field from the weak-field fit, outside its validity range.
          SetVector(out, g.blos_gauss, g.blos_err_gauss, w.btrans_gauss, w.btrans_err_gauss, w.btrans_sq_err_gauss2);
          out_of_range = true;
        }
        break;
      case MapMethod::kSplitting: {
        // An unresolved split measures no |B| (its separation is then unconstrained): only the centre of
        // gravity's B_LOS is written, and the pixel carries OUT_OF_RANGE.
        if (g.ok) {
          out.v[kSlotBlos] = static_cast<float>(g.blos_gauss);
          out.v[kSlotBlosErr] = static_cast<float>(g.blos_err_gauss);
        }
        if (!split_check.resolved) break;
        const double f = sp.field_gauss, fe = sp.field_err_gauss;
        out.v[kSlotField] = static_cast<float>(f);
        out.v[kSlotFieldErr] = static_cast<float>(fe);
        out.v[kSlotChi2] = static_cast<float>(sp.chi2_reduced);
        if (g.ok && f > 0.0) {
          const double le = g.blos_err_gauss;
          out.v[kSlotBlos] = static_cast<float>(g.blos_gauss);
          out.v[kSlotBlosErr] = static_cast<float>(le);
          if (split_check.inconsistent) {
            // |B| from the split below the centre-of-gravity |B_LOS| (CheckSplit): the two cannot both be
            // right, so no inclination or transverse field is derived from them.
            out.quality |= kQualityInconsistent;
          } else {
            // Inclination and B_T from x = B_LOS/|B|; errors as half the spread over x +- sigma_x (clamped to
            // [-1, 1]), which stays finite where the linear propagation diverges (|x| -> 1).
            const double x = std::clamp(g.blos_gauss / f, -1.0, 1.0);
            const double sx = std::hypot(le / f, g.blos_gauss * fe / (f * f));
            const double xlo = std::clamp(x - sx, -1.0, 1.0), xhi = std::clamp(x + sx, -1.0, 1.0);
            out.v[kSlotInclination] = static_cast<float>(std::acos(x) * kRadToDeg);
            out.v[kSlotInclinationErr] = static_cast<float>(0.5 * (std::acos(xlo) - std::acos(xhi)) * kRadToDeg);
            auto trans = [f](double xx) { return f * std::sqrt(std::max(1.0 - xx * xx, 0.0)); };
            const double bt = trans(x);
            const double bt_spread = std::fabs(trans(xlo) - trans(xhi)) * 0.5;
            out.v[kSlotBtrans] = static_cast<float>(bt);
            out.v[kSlotBtransErr] = static_cast<float>(std::hypot(bt_spread, fe * std::sqrt(std::max(1.0 - x * x, 0.0))));
          }
        }
        break;
      }
      case MapMethod::kMilneEddington:
        ProcessMe(s, c, w, g, sp, regime.weak, out);
        return;
      default:
        break;
    }
    // Velocity: the splitting fit's centre when it was used, otherwise the centroid of I +- V.
    if (m == MapMethod::kSplitting) {
      out.v[kSlotVlos] = static_cast<float>(sp.vlos_kms);
      out.v[kSlotVlosErr] = static_cast<float>(sp.vlos_err_kms);
    } else if (g.ok) {
      out.v[kSlotVlos] = static_cast<float>(g.vlos_kms);
      out.v[kSlotVlosErr] = static_cast<float>(g.vlos_err_kms);
    }
    // Azimuth: angle of the linear-polarisation regression, whatever the regime.
    if (w.has_btrans && m != MapMethod::kCentreOfGravity) {
      out.v[kSlotAzimuth] = static_cast<float>(w.azimuth_deg);
      out.v[kSlotAzimuthErr] = static_cast<float>(w.azimuth_err_deg);
    } else if (w.has_btrans && o_.method == MapMethod::kAuto) {
      out.v[kSlotAzimuth] = static_cast<float>(w.azimuth_deg);
      out.v[kSlotAzimuthErr] = static_cast<float>(w.azimuth_err_deg);
    }

    if (out_of_range) out.quality |= kQualityOutOfRange;
    // Weak-field transverse answers: B_T^2 is the Gaussian quantity; below transverse_detection sigma the
    // skewed B_T, inclination and azimuth can sit several of their own sigma from the truth (field_vector.hpp).
    if ((m == MapMethod::kWeakField || m == MapMethod::kCentreOfGravity) && w.has_btrans &&
        std::isfinite(out.v[kSlotBtrans]) && w.btrans_snr < o_.transverse_detection)
      out.quality |= kQualityLowTransverse;
    const double k = o_.detection_sigma;
    // Detection against the noise alone: the centre-of-gravity B_LOS's sigma carries a model term
    // (centre_of_gravity.hpp), and so may the weak-field B_T's (weak_field.hpp).
    const bool blos_from_cog = (m == MapMethod::kCentreOfGravity || m == MapMethod::kSplitting) && g.ok;
    const double blos_noise_err = blos_from_cog ? g.blos_noise_err_gauss : out.v[kSlotBlosErr];
    const bool blos_seen = std::isfinite(out.v[kSlotBlos]) && std::fabs(out.v[kSlotBlos]) > k * blos_noise_err;
    const double bt_noise_err = (m == MapMethod::kWeakField || m == MapMethod::kCentreOfGravity) && w.has_btrans
                                    ? w.btrans_noise_err_gauss
                                    : out.v[kSlotBtransErr];
    const bool bt_seen = std::isfinite(out.v[kSlotBtrans]) && out.v[kSlotBtrans] > k * bt_noise_err;
    const bool field_seen = m == MapMethod::kSplitting && std::isfinite(out.v[kSlotField]) &&
                            out.v[kSlotField] > k * out.v[kSlotFieldErr];
    if (!blos_seen && !bt_seen && !field_seen) out.quality |= kQualityLowSignal;
    if (m == MapMethod::kSplitting && !(sp.ok)) out.quality |= kQualityNotConverged;
  }

 private:
  // Milne-Eddington pixel: hints from the cheaper estimators, then the inversion (me_inversion.hpp).
  void ProcessMe(const PixelSpectrum& s, const ContinuumEstimate& c, const WeakFieldResult& w,
                 const CentreOfGravityResult& g, const SplittingResult& sp, bool weak, PixelOut& out) {
    MeStartHints h;
    // B_LOS: the weak-field value in its regime, the centre of gravity (valid at any strength) otherwise.
    if (w.has_blos && (weak || !g.ok)) h.blos_gauss = w.blos_gauss;
    else if (g.ok) h.blos_gauss = g.blos_gauss;
    if (w.has_btrans && std::isfinite(w.azimuth_deg)) {
      h.btrans_gauss = w.btrans_gauss;
      h.azimuth_deg = w.azimuth_deg;
    }
    if (g.ok) h.vlos_kms = g.vlos_kms;
    if (sp.ok && sp.resolved) h.field_gauss = sp.field_gauss;
    const MeResult r = me_->Invert(s, c, h, me_work_);
    out.me_iterations = r.iterations;
    if (!r.ok) {
      out.quality |= kQualityNotConverged;
      return;
    }
    const MeParameters& p = r.params;
    const auto& e = r.sigma;
    out.v[kSlotField] = FiniteOrNaN(p.field_gauss);
    out.v[kSlotFieldErr] = FiniteOrNaN(e[0]);
    out.v[kSlotInclination] = FiniteOrNaN(p.inclination_deg);
    out.v[kSlotInclinationErr] = FiniteOrNaN(e[1]);
    if (has_qu_) {
      out.v[kSlotAzimuth] = FiniteOrNaN(p.azimuth_deg);
      out.v[kSlotAzimuthErr] = FiniteOrNaN(e[2]);
    }
    out.v[kSlotBlos] = FiniteOrNaN(r.blos_gauss);
    out.v[kSlotBlosErr] = FiniteOrNaN(r.blos_err_gauss);
    out.v[kSlotBtrans] = FiniteOrNaN(r.btrans_gauss);
    out.v[kSlotBtransErr] = FiniteOrNaN(r.btrans_err_gauss);
    out.v[kSlotVlos] = FiniteOrNaN(p.vlos_kms);
    out.v[kSlotVlosErr] = FiniteOrNaN(e[3]);
    out.v[kSlotChi2] = FiniteOrNaN(r.chi2_reduced);
    if (!r.converged) out.quality |= kQualityNotConverged;
    if (r.bad_fit) out.quality |= kQualityBadFit;
    // Undetected linear polarisation, the weak-field pixels' test on the fitted B_T: B_T^2 below
    // transverse_detection times its sigma, 2 B_T sigma(B_T) (a NaN sigma counts as not detected; 0 turns the
    // test off, as for weak-field pixels). The fitted B_T is then the length of a noise-dominated vector, biased
    // high, and the inclination and azimuth follow it: on the 479 MiB bench cube (noise 1e-3) 109 values of
    // 90 026 unflagged such pixels were > 5 sigma and > 20 % off (B_T, |B|, B_INCL, B_AZIM); the test flags all.
    if (has_qu_ && o_.transverse_detection > 0.0 && std::isfinite(out.v[kSlotBtrans]) &&
        !(out.v[kSlotBtrans] > 2.0 * o_.transverse_detection * out.v[kSlotBtransErr]))
      out.quality |= kQualityLowTransverse;
    const double k = o_.detection_sigma;
    const bool blos_seen = std::isfinite(out.v[kSlotBlos]) && std::fabs(out.v[kSlotBlos]) > k * out.v[kSlotBlosErr];
    const bool bt_seen = std::isfinite(out.v[kSlotBtrans]) && out.v[kSlotBtrans] > k * out.v[kSlotBtransErr];
    if (!blos_seen && !bt_seen) out.quality |= kQualityLowSignal;
  }

  const FieldMapOptions& o_;
  const SpectralLayout& lay_;
  bool has_qu_, has_v_;
  const MeInverter* me_ = nullptr;
  MeWorkspace me_work_;
  WeakFieldOptions wfa_;
  CentreOfGravityOptions cog_;
  CentreOfGravityWorkspace cog_work_;
  SplittingOptions split_;
  WeakFieldWorkspace wfa_work_;
  WeakFieldRegimeOptions regime_;
};

// ---- checkpoints: a small binary file rewritten (temp + rename) after every tile. Both kinds begin with
// the magic, the fingerprint and {nx, ny, rows_done, kSlotCount}; whole maps (no sink) follow with the maps of
// the finished rows, a run with a sink with its counts only.
constexpr char kCheckpointMagic[8] = {'Z', 'L', 'C', 'K', 'P', 'T', '0', '1'};
constexpr char kSinkCheckpointMagic[8] = {'Z', 'L', 'C', 'K', 'P', 'T', 'S', '1'};

template <class Body>
void WriteCheckpoint(const std::string& path, const char (&magic)[8], const std::string& fingerprint,
                     const FieldMaps& m, Body body) {
  const std::string tmp = path + ".tmp";
  try {
    {
      std::ofstream out(tmp, std::ios::binary | std::ios::trunc);
      if (!out) throw FitsError(path + ": cannot write the checkpoint file");
      out.write(magic, 8);
      const std::uint64_t flen = fingerprint.size();
      out.write(reinterpret_cast<const char*>(&flen), sizeof flen);
      out.write(fingerprint.data(), static_cast<std::streamsize>(flen));
      const std::int64_t header[4] = {m.nx, m.ny, m.rows_done, kSlotCount};
      out.write(reinterpret_cast<const char*>(header), sizeof header);
      body(out);
      if (!out) throw FitsError(path + ": writing the checkpoint failed (disk full?)");
    }
    if (std::rename(tmp.c_str(), path.c_str()) != 0) throw FitsError(path + ": cannot rename the checkpoint into place");
  } catch (...) {
    std::remove(tmp.c_str());  // no half-written file left behind; the previous checkpoint stays valid
    throw;
  }
}

// Opens a checkpoint of one kind (a run with a sink or without) and reads its head into m.rows_done; false
// when there is none.
bool OpenCheckpoint(std::ifstream& in, const std::string& path, bool sink_kind, const std::string& fingerprint,
                    FieldMaps& m) {
  const char* magic = sink_kind ? kSinkCheckpointMagic : kCheckpointMagic;
  in.open(path, std::ios::binary);
  if (!in) return false;
  char found[8];
  in.read(found, 8);
  if (in && std::memcmp(found, sink_kind ? kCheckpointMagic : kSinkCheckpointMagic, 8) == 0)
    throw FitsError(path + (sink_kind ? ": this checkpoint holds whole maps (a library run without a sink), not the "
                                        "rows of a map file; remove it or run without --resume"
                                      : ": this checkpoint belongs to a map file written as it goes (zeeline map), "
                                        "not to whole maps in memory; remove it or run without --resume"));
  if (!in || std::memcmp(found, magic, 8) != 0)
    throw FitsError(path + ": not a zeeline checkpoint (bad magic); remove it or run without --resume");
  std::uint64_t flen = 0;
  in.read(reinterpret_cast<char*>(&flen), sizeof flen);
  if (!in || flen > (1u << 20)) throw FitsError(path + ": corrupt checkpoint header");
  std::string fp(flen, '\0');
  in.read(fp.data(), static_cast<std::streamsize>(flen));
  if (fp != fingerprint)
    throw FitsError(path + ": the checkpoint was made from another input or other options; remove it to start again");
  std::int64_t header[4];
  in.read(reinterpret_cast<char*>(header), sizeof header);
  if (!in || header[0] != m.nx || header[1] != m.ny || header[3] != kSlotCount || header[2] < 0 || header[2] > m.ny)
    throw FitsError(path + ": checkpoint dimensions do not match the cube");
  m.rows_done = header[2];
  return true;
}

// The counts a checkpoint of a run with a sink holds (the sink keeps the rows, FieldMapSink::Sync).
constexpr int kSinkCounts = 5 + 1 + 2 + 4 + 1;  // method_counts, me_iterations, flagged, usable, rejected, slots

}  // namespace

void SaveFieldMapCheckpoint(const std::string& path, const std::string& fingerprint, const FieldMaps& m) {
  WriteCheckpoint(path, kCheckpointMagic, fingerprint, m, [&m](std::ofstream& out) {
    out.write(reinterpret_cast<const char*>(m.method_counts), sizeof m.method_counts);
    const std::size_t np = static_cast<std::size_t>(m.nx * m.rows_done);
    for (const auto& s : m.slots) out.write(reinterpret_cast<const char*>(s.data()), static_cast<std::streamsize>(np * sizeof(float)));
    out.write(reinterpret_cast<const char*>(m.method.data()), static_cast<std::streamsize>(np * sizeof(std::int16_t)));
    out.write(reinterpret_cast<const char*>(m.quality.data()), static_cast<std::streamsize>(np * sizeof(std::int32_t)));
  });
}

bool LoadFieldMapCheckpoint(const std::string& path, const std::string& fingerprint, FieldMaps& m) {
  std::ifstream in;
  if (!OpenCheckpoint(in, path, false, fingerprint, m)) return false;
  in.read(reinterpret_cast<char*>(m.method_counts), sizeof m.method_counts);
  const std::size_t np = static_cast<std::size_t>(m.nx * m.rows_done);
  for (auto& s : m.slots) in.read(reinterpret_cast<char*>(s.data()), static_cast<std::streamsize>(np * sizeof(float)));
  in.read(reinterpret_cast<char*>(m.method.data()), static_cast<std::streamsize>(np * sizeof(std::int16_t)));
  in.read(reinterpret_cast<char*>(m.quality.data()), static_cast<std::streamsize>(np * sizeof(std::int32_t)));
  if (!in) throw FitsError(path + ": checkpoint is truncated");
  return true;
}

void SaveFieldMapSinkCheckpoint(const std::string& path, const std::string& fingerprint, const FieldMaps& m) {
  std::int64_t c[kSinkCounts];
  for (int k = 0; k < 5; ++k) c[k] = m.method_counts[k];
  c[5] = m.me_iterations;
  c[6] = m.flagged_pixels;
  c[7] = m.usable_pixels;
  for (int k = 0; k < 4; ++k) c[8 + k] = m.rejected_pixels[k];
  c[12] = m.slots_with_values;
  WriteCheckpoint(path, kSinkCheckpointMagic, fingerprint, m,
                  [&c](std::ofstream& out) { out.write(reinterpret_cast<const char*>(c), sizeof c); });
}

bool LoadFieldMapSinkCheckpoint(const std::string& path, const std::string& fingerprint, FieldMaps& m) {
  std::ifstream in;
  if (!OpenCheckpoint(in, path, true, fingerprint, m)) return false;
  std::int64_t c[kSinkCounts];
  in.read(reinterpret_cast<char*>(c), sizeof c);
  if (!in) throw FitsError(path + ": checkpoint is truncated");
  for (int k = 0; k < 5; ++k) m.method_counts[k] = c[k];
  m.me_iterations = c[5];
  m.flagged_pixels = c[6];
  m.usable_pixels = c[7];
  for (int k = 0; k < 4; ++k) m.rejected_pixels[k] = c[8 + k];
  m.slots_with_values = static_cast<std::uint32_t>(c[12]);
  return true;
}

void TallyRows(const FieldMaps& m, long row_begin, long rows, FieldMaps& into) {
  const std::size_t begin = static_cast<std::size_t>(row_begin * m.nx), end = begin + static_cast<std::size_t>(rows * m.nx);
  const std::uint32_t bits[4] = {kQualityNonFiniteInput, kQualityAbsurdInput, kQualityNonPositiveI,
                                 kQualityPolExceedsI};
  std::int64_t flagged = 0, usable = 0, rejected[4] = {0, 0, 0, 0};
  for (std::size_t i = begin; i < end; ++i) {
    const auto q = static_cast<std::uint32_t>(m.quality[i]);
    flagged += q != 0;
    if (!(q & kQualityInputRejected)) {
      ++usable;
      continue;
    }
    for (int b = 0; b < 4; ++b) rejected[b] += (q & bits[b]) != 0;
  }
  std::uint32_t with_values = 0;
  for (int k = 0; k < kSlotCount; ++k) {
    if (into.slots_with_values & (1u << k)) continue;  // known already
    const float* v = m.slots[static_cast<std::size_t>(k)].data();
    for (std::size_t i = begin; i < end; ++i)
      if (std::isfinite(v[i])) {
        with_values |= 1u << k;
        break;
      }
  }
  into.flagged_pixels += flagged;
  into.usable_pixels += usable;
  for (int b = 0; b < 4; ++b) into.rejected_pixels[b] += rejected[b];
  into.slots_with_values |= with_values;
}

void AddCounts(const FieldMaps& from, FieldMaps& into) {
  for (int k = 0; k < 5; ++k) into.method_counts[k] += from.method_counts[k];
  into.me_iterations += from.me_iterations;
  into.flagged_pixels += from.flagged_pixels;
  into.usable_pixels += from.usable_pixels;
  for (int k = 0; k < 4; ++k) into.rejected_pixels[k] += from.rejected_pixels[k];
  into.slots_with_values |= from.slots_with_values;
}

std::vector<int> WholeMapSlots(const FieldMapOptions& o) {
  if (!o.disambiguate) return {};
  return {kSlotBlos, kSlotBtrans, kSlotBtransErr, kSlotAzimuth};
}

const char* MapSlotName(int slot) {
  static const char* kNames[kSlotCount] = {"B_TOTAL",  "B_TOTAL_SIGMA",  "B_INCL", "B_INCL_SIGMA", "B_AZIM",
                                           "B_AZIM_SIGMA", "B_LOS", "B_LOS_SIGMA", "B_TRANS", "B_TRANS_SIGMA",
                                           "V_LOS",   "V_LOS_SIGMA",   "CHI2"};
  return (slot >= 0 && slot < kSlotCount) ? kNames[slot] : "?";
}

std::string FieldMapOptions::Validate() const {
  std::ostringstream m;
  if (!(rest_wavelength_nm > 0.0) || !std::isfinite(rest_wavelength_nm))
    m << "rest wavelength = " << rest_wavelength_nm << " nm must be positive (give --wavelength or --line)";
  else if (!(std::fabs(pattern.g_eff) > 1e-6))
    m << "g_eff = " << pattern.g_eff << ": the line is magnetically insensitive; choose another line";
  else if (!(window_halfwidth_nm >= 0.0)) m << "window half-width = " << window_halfwidth_nm << " nm must be >= 0";
  else if (!(continuum_exclude_nm >= 0.0)) m << "continuum exclusion = " << continuum_exclude_nm << " nm must be >= 0";
  else if (!(noise_rel >= 0.0) || noise_rel > 1.0) m << "noise = " << noise_rel << " must be in [0, 1] of the continuum";
  else if (!(weak_ratio > 0.0) || weak_ratio > 5.0) m << "weak ratio = " << weak_ratio << " must be in (0, 5]";
  else if (!(resolution_ratio > 0.0)) m << "resolution ratio = " << resolution_ratio << " must be > 0";
  else if (!(detection_sigma >= 0.0)) m << "detection sigma = " << detection_sigma << " must be >= 0";
  else if (threads < 0 || threads > 1024) m << "threads = " << threads << " must be in [0, 1024]";
  else if (const std::string me_problem = me.Validate(); !me_problem.empty()) m << me_problem;
  else if (const std::string d_problem = disambiguation.Validate(); !d_problem.empty()) m << d_problem;
  else if (!(wing_start_nm >= 0.0)) m << "wing start = " << wing_start_nm << " nm must be >= 0 (0 = 4.8 Doppler widths)";
  else if (!(consistency_sigma > 0.0)) m << "consistency sigma = " << consistency_sigma << " must be > 0";
  else if (!(transverse_detection >= 0.0)) m << "transverse detection = " << transverse_detection << " must be >= 0";
  else if (!(cog_model_error >= 0.0 && cog_model_error <= 0.3))
    m << "centre-of-gravity model error = " << cog_model_error << " must be in [0, 0.3]";
  else if (!(transverse_model_error >= 0.0 && transverse_model_error <= 0.2))
    m << "transverse model error = " << transverse_model_error
      << " must be in [0, 0.2] (more would let the model term decide sigma-based thresholds)";
  else {
    for (std::size_t i = 0; i < extra_lines.size(); ++i) {
      const MeLine& l = extra_lines[i];
      if (!(l.wavelength_nm > 0.0) || !std::isfinite(l.wavelength_nm)) {
        m << "extra line " << i + 1 << ": wavelength = " << l.wavelength_nm << " nm must be positive";
        break;
      }
      if (!(l.relative_strength > 0.0) || !std::isfinite(l.relative_strength)) {
        m << "extra line " << i + 1 << ": relative strength = " << l.relative_strength << " must be > 0";
        break;
      }
    }
    if (m.str().empty() && disambiguate && method != MapMethod::kMilneEddington && method != MapMethod::kAuto &&
        method != MapMethod::kWeakField && method != MapMethod::kSplitting)
      m << "--disambiguate needs an azimuth map: method '" << ToString(method) << "' gives none";
  }
  return m.str();
}

FieldMapEngine::FieldMapEngine(const CubeInfo& info, const FieldMapOptions& o) : info_(info), o_(o) {
  const std::string problem = o.Validate();
  if (!problem.empty()) throw OptionError(problem);
  si_ = info.StokesIndex(StokesParameter::kI);
  sq_ = info.StokesIndex(StokesParameter::kQ);
  su_ = info.StokesIndex(StokesParameter::kU);
  sv_ = info.StokesIndex(StokesParameter::kV);
  std::string present;
  for (auto s : info.stokes) present += ToString(s);
  if (si_ < 0)
    throw FitsError(info.path + ": the STOKES axis holds " + present + " but every method needs Stokes I (code 1)");
  has_qu_ = sq_ >= 0 && su_ >= 0;
  has_v_ = sv_ >= 0;
  if (o.need_transverse && !has_qu_)
    throw FitsError(info.path + ": the STOKES axis holds " + present +
                    " only; B_TRANS, B_AZIM, B_TOTAL and B_INCL need Stokes Q and U (codes 2 and 3)");
  if (!has_v_ && (o.method == MapMethod::kWeakField || o.method == MapMethod::kCentreOfGravity))
    throw FitsError(info.path + ": the STOKES axis holds " + present + "; method '" + ToString(o.method) +
                    "' needs Stokes V (code 4) for B_LOS");
  if (info.wavelength_nm.size() < 10)
    throw FitsError(info.path + ": the spectral axis has " + std::to_string(info.wavelength_nm.size()) +
                    " samples; at least 10 are needed");
  if (o.rest_wavelength_nm < info.wavelength_nm.front() || o.rest_wavelength_nm > info.wavelength_nm.back()) {
    std::ostringstream m;
    m.precision(10);
    m << info.path << ": the rest wavelength " << o.rest_wavelength_nm << " nm (" << ToString(info.frame)
      << ") lies outside the cube's spectral range " << info.wavelength_nm.front() << " - "
      << info.wavelength_nm.back() << " nm; check the line and the air/vacuum frame";
    throw FitsError(m.str());
  }
  if (o.disambiguate && !has_qu_)
    throw FitsError(info.path + ": the STOKES axis holds " + present +
                    "; azimuth disambiguation needs Stokes Q and U (codes 2 and 3)");
  if (o.method == MapMethod::kMilneEddington && !has_v_ && !has_qu_)
    throw FitsError(info.path + ": the STOKES axis holds " + present + "; method 'me' needs Stokes V or Q and U");
  // One inverter shared by all threads (const, thread-safe); each thread has its own workspace.
  if (o.method == MapMethod::kMilneEddington || (o.method == MapMethod::kAuto && o.auto_me)) {
    MeInversionOptions mo = o.me;
    if (!has_qu_) mo.stokes_weights[1] = mo.stokes_weights[2] = 0.0;
    if (!has_v_) mo.stokes_weights[3] = 0.0;
    std::vector<MeLine> lines(1);
    lines[0].wavelength_nm = o.rest_wavelength_nm;
    lines[0].pattern = o.pattern;
    lines.insert(lines.end(), o.extra_lines.begin(), o.extra_lines.end());
    inverter_ = std::make_unique<MeInverter>(lines, mo);
  }
}

FieldMapEngine::~FieldMapEngine() = default;

void FieldMapEngine::ChooseLayout(CubeReader& reader) {
  RawCubeTile tile;
  reader.ReadRowsRaw(0, std::min(reader.rows_per_tile(), info_.ny), tile);
  ChooseLayout(tile);
}

// Pixels per gather (8 pixels' IQUV spectra of 60 samples: 15 KiB, within L1).
constexpr long kPixelBlock = 8;

void FieldMapEngine::ChooseLayout(const RawCubeTile& first_tile) {
  // The spectral layout always comes from the first tile, so a resumed run makes the same choices.
  if (first_tile.y_begin != 0 || first_tile.nx != info_.nx)
    throw OptionError("FieldMapEngine::ChooseLayout: the tile must be the reader's first tile (rows from 0)");
  // Pixels with non-finite or absurd samples (data_sanity.hpp) stay out of the mean profile and of the cube's
  // median level, which sets the data-sanity ceiling.
  const std::size_t nw = info_.wavelength_nm.size();
  const std::size_t record = nw * static_cast<std::size_t>(info_.n_stokes());
  std::vector<double> mean_I(nw, 0.0), spectra(record * static_cast<std::size_t>(kPixelBlock));
  std::vector<long> count(nw, 0);
  const long np = first_tile.n_pixels();
  // Pixel p's spectra, gathered a block of kPixelBlock pixels at a time (CheckSampleRange finds NaN/Inf).
  long block_begin = -1;
  auto gather = [&](long p) {
    if (block_begin < 0 || p < block_begin || p >= block_begin + kPixelBlock) {
      block_begin = p - p % kPixelBlock;
      first_tile.GatherBlock(block_begin, std::min(kPixelBlock, np - block_begin), spectra.data());
    }
    const double* d = spectra.data() + static_cast<std::size_t>(p - block_begin) * record;
    return PixelSpectrum{info_.wavelength_nm.data(), nw, d + static_cast<std::size_t>(si_) * nw,
                         has_qu_ ? d + static_cast<std::size_t>(sq_) * nw : nullptr,
                         has_qu_ ? d + static_cast<std::size_t>(su_) * nw : nullptr,
                         has_v_ ? d + static_cast<std::size_t>(sv_) * nw : nullptr};
  };
  const DataSanityLimits type_range = MakeSanityLimits(info_.bitpix, 0.0, 0.0);
  const std::size_t stride = std::max<std::size_t>(1, static_cast<std::size_t>(np) * nw / (1u << 20));
  std::vector<double> levels;
  for (long p = 0; p < np; ++p) {
    const PixelSpectrum s = gather(p);
    if (CheckSampleRange(s, type_range)) continue;
    for (std::size_t k = static_cast<std::size_t>(p) % stride; k < nw; k += stride) levels.push_back(s.I[k]);
  }
  const double median_level = MedianLevel(std::move(levels));
  block_begin = -1;
  const DataSanityLimits range = MakeSanityLimits(info_.bitpix, median_level, 0.0);
  for (long p = 0; p < np; ++p) {
    const PixelSpectrum s = gather(p);
    if (CheckSampleRange(s, range)) continue;  // NaN/Inf, fill values, absurd levels
    const double* I = s.I;
    for (std::size_t k = 0; k < nw; ++k) {
      mean_I[k] += I[k];
      ++count[k];
    }
  }
  for (std::size_t k = 0; k < nw; ++k) mean_I[k] = count[k] ? mean_I[k] / static_cast<double>(count[k]) : 0.0;
  layout_ = zeeline::ChooseLayout(info_.wavelength_nm, mean_I, o_);  // the free function above
  layout_.median_level = median_level;
}

void FieldMapEngine::InitMaps(long rows, FieldMaps& maps) const {
  maps.nx = info_.nx;
  maps.ny = rows;
  maps.has_transverse = has_qu_;
  const std::size_t np = static_cast<std::size_t>(info_.nx * rows);
  maps.slots.assign(kSlotCount, std::vector<float>(np, kNaN));
  maps.method.assign(np, 0);
  maps.quality.assign(np, static_cast<std::int32_t>(kQualityMasked));
  maps.rows_done = 0;
  maps.read_seconds = maps.read_wait_seconds = maps.compute_seconds = 0.0;
  std::fill(std::begin(maps.method_counts), std::end(maps.method_counts), 0);
  maps.disambiguation.clear();
  maps.me_iterations = 0;
  maps.flagged_pixels = maps.usable_pixels = 0;
  std::fill(std::begin(maps.rejected_pixels), std::end(maps.rejected_pixels), 0);
  maps.slots_with_values = 0;
  maps.sink_seconds = 0.0;
}

void FieldMapEngine::InitSinkMaps(FieldMaps& maps) const {
  InitMaps(0, maps);
  maps.ny = info_.ny;
  const std::size_t np = static_cast<std::size_t>(info_.nx * info_.ny);
  for (int k : WholeMapSlots(o_)) maps.slots[static_cast<std::size_t>(k)].assign(np, kNaN);
}

namespace {
// Where a block of pixels' spectra come from: a pixel-major CubeTile (a pointer into it), or a file-order
// RawCubeTile (gathered into the worker's buffer, FieldMapEngine::Compute). Either way pixel first + j's
// spectra start at the returned pointer + j * n_stokes * n_wavelength.
struct FromCubeTile {
  const CubeTile& tile;
  long n_pixels() const { return tile.n_pixels(); }
  const double* Spectra(long first, long, std::vector<double>&) const { return tile.Spectrum(first, 0); }
};
struct FromRawTile {
  const RawCubeTile& tile;
  long n_pixels() const { return tile.n_pixels(); }
  const double* Spectra(long first, long count, std::vector<double>& buffer) const {
    tile.GatherBlock(first, count, buffer.data());  // CheckPixelSanity finds the NaN/Inf samples
    return buffer.data();
  }
};
}  // namespace

void FieldMapEngine::Compute(const CubeTile& tile, FieldMaps& maps, long first_row) const {
  CheckRows(tile.y_begin, tile.y_count, tile.nx, maps, first_row);
  ComputePixels(FromCubeTile{tile}, tile.y_begin - first_row, maps);
}

void FieldMapEngine::Compute(const RawCubeTile& tile, FieldMaps& maps, long first_row) const {
  CheckRows(tile.y_begin, tile.y_count, tile.nx, maps, first_row);
  ComputePixels(FromRawTile{tile}, tile.y_begin - first_row, maps);
}

void FieldMapEngine::CheckRows(long y_begin, long y_count, long nx, const FieldMaps& maps, long first_row) const {
  if (layout_.continuum.empty()) throw OptionError("FieldMapEngine::Compute: no spectral layout (call ChooseLayout)");
  if (y_begin < first_row || y_begin + y_count > first_row + maps.ny || nx != maps.nx)
    throw OptionError("FieldMapEngine::Compute: rows " + std::to_string(y_begin) + ".." +
                      std::to_string(y_begin + y_count - 1) + " lie outside the maps");
}

template <class Source>
void FieldMapEngine::ComputePixels(const Source& source, long y0, FieldMaps& maps) const {
  const std::size_t nw = info_.wavelength_nm.size();
  const int threads = ResolveThreadCount(o_.threads);
  const long npix = source.n_pixels();
  std::int64_t counts[5] = {0, 0, 0, 0, 0};
  std::int64_t me_iterations = 0;
  const DataSanityLimits sanity = MakeSanityLimits(info_.bitpix, layout_.median_level, o_.noise_rel);
  const ContinuumRuns continuum_runs = MakeContinuumRuns(layout_.continuum);
#pragma omp parallel num_threads(threads)
  {
    PixelProcessor proc(o_, layout_, has_qu_, has_v_, inverter_.get(), info_.wavelength_nm.data(), nw);
    PixelOut out;
    const std::size_t record = nw * static_cast<std::size_t>(info_.n_stokes());
    std::vector<double> buffer(record * static_cast<std::size_t>(kPixelBlock));  // a block of pixels' spectra
    std::int64_t local[5] = {0, 0, 0, 0, 0};
    std::int64_t local_iterations = 0;
#pragma omp for schedule(dynamic, 8)
    for (long b = 0; b < npix; b += kPixelBlock) {
      const long count = std::min(kPixelBlock, npix - b);
      const double* block = source.Spectra(b, count, buffer);
      for (long p = b; p < b + count; ++p) {
        const double* spectra = block + static_cast<std::size_t>(p - b) * record;  // [stokes][wavelength]
        PixelSpectrum s;
        s.wavelength_nm = info_.wavelength_nm.data();
        s.n = nw;
        s.I = spectra + static_cast<std::size_t>(si_) * nw;
        s.Q = has_qu_ ? spectra + static_cast<std::size_t>(sq_) * nw : nullptr;
        s.U = has_qu_ ? spectra + static_cast<std::size_t>(su_) * nw : nullptr;
        s.V = has_v_ ? spectra + static_cast<std::size_t>(sv_) * nw : nullptr;
        ContinuumEstimate c;
        const std::uint32_t rejected = CheckPixelSanity(s, continuum_runs, sanity, c);
        proc.Process(s, rejected, c, out);
        const std::size_t g = static_cast<std::size_t>(y0 * info_.nx + p);
        for (int k = 0; k < kSlotCount; ++k) maps.slots[static_cast<std::size_t>(k)][g] = out.v[k];
        maps.method[g] = out.method;
        maps.quality[g] = out.quality;
        if (out.method >= 0 && out.method < 5) ++local[out.method];
        local_iterations += out.me_iterations;
      }
    }
#pragma omp critical
    {
      for (int k = 0; k < 5; ++k) counts[k] += local[k];
      me_iterations += local_iterations;
    }
  }
  for (int k = 0; k < 5; ++k) maps.method_counts[k] += counts[k];
  maps.me_iterations += me_iterations;
}

void FieldMapEngine::Finish(FieldMaps& maps) const {
  if (maps.quality.size() == static_cast<std::size_t>(maps.nx * maps.ny)) RequireUsablePixel(maps.quality, info_.path);
  else RequireUsablePixel(maps.usable_pixels, maps.nx * maps.ny, maps.rejected_pixels, info_.path);
  if (o_.disambiguate)
    DisambiguateAzimuth(maps.nx, maps.ny, maps.slots[kSlotBlos], maps.slots[kSlotBtrans], maps.slots[kSlotBtransErr],
                        maps.slots[kSlotAzimuth], maps.disambiguation, o_.disambiguation);
}

RunStatus ComputeFieldMaps(CubeReader& reader, const FieldMapOptions& o, const FieldMapRunOptions& run, FieldMaps& maps) {
  const CubeInfo& info = reader.info();
  FieldMapEngine engine(info, o);
  FieldMapSink* const sink = run.sink;
  const bool checkpoints = !run.checkpoint_path.empty();
  if (sink) {
    engine.InitSinkMaps(maps);
    if (run.resume && checkpoints) LoadFieldMapSinkCheckpoint(run.checkpoint_path, run.fingerprint, maps);
    sink->Begin(maps.rows_done, maps);
  } else {
    engine.InitMaps(info.ny, maps);
    if (run.resume && checkpoints && LoadFieldMapCheckpoint(run.checkpoint_path, run.fingerprint, maps))
      TallyRows(maps, 0, maps.rows_done, maps);
  }
  auto save_checkpoint = [&] {
    if (!checkpoints) return;
    if (!sink) return SaveFieldMapCheckpoint(run.checkpoint_path, run.fingerprint, maps);
    sink->Sync();  // the rows first, then the checkpoint that counts on them
    SaveFieldMapSinkCheckpoint(run.checkpoint_path, run.fingerprint, maps);
  };

  using Clock = std::chrono::steady_clock;
  auto seconds_since = [](Clock::time_point t0) { return std::chrono::duration<double>(Clock::now() - t0).count(); };
  const long rows_per_tile = reader.rows_per_tile();
  const int threads = ResolveThreadCount(o.threads);
  const std::vector<int> whole_slots = WholeMapSlots(o);
  // Tiles in file order (RawCubeTile): each worker gathers its pixel's spectra itself, in its own cache,
  // instead of a separate reorder pass over the tile (docs/methods.md, "What the speed depends on").
  RawCubeTile tile, next_tile;
  {
    const auto t0 = Clock::now();
    reader.ReadRowsRaw(0, std::min(rows_per_tile, info.ny), tile);
    maps.read_seconds = maps.read_wait_seconds = seconds_since(t0);  // nothing to overlap with yet
  }
  engine.ChooseLayout(tile);
  maps.continuum_samples = engine.layout().continuum.size();

  // Double buffering: the next tile is read (cfitsio) on a second thread while the estimators work on the
  // current one. At most one read is in flight, so the reader is never used concurrently.
  std::future<void> pending;
  // With a single thread there is no second thread: the read is deferred and runs inside pending.get().
  const auto policy = threads > 1 ? std::launch::async : std::launch::deferred;
  double read_seconds = 0.0;  // written by the reading task only, read after pending.get()
  auto start_read = [&](long y_begin, RawCubeTile& into) {
    const long count = std::min(rows_per_tile, info.ny - y_begin);
    pending = std::async(policy, [&reader, y_begin, count, &into, &read_seconds, seconds_since] {
      const auto t0 = Clock::now();
      reader.ReadRowsRaw(y_begin, count, into);
      read_seconds += seconds_since(t0);
    });
  };
  if (maps.rows_done == 0) {
    std::swap(tile, next_tile);  // the layout tile is the loop's first tile: not read twice
    pending = std::async(std::launch::deferred, [] {});
  } else if (maps.rows_done < info.ny) {
    start_read(maps.rows_done, next_tile);
  }
  // With a sink: the maps of a tile's rows, two of them, so that one is handed to the sink on its own thread
  // while the next is computed (not with checkpoints, which must count only rows the sink has; nor with one
  // thread). Declared after the blocks: a write in flight is waited for before they go away.
  FieldMaps blocks[2];
  int current = 0;
  // The write and the next tile's read then call cfitsio at the same time (on different files): only with a
  // thread-safe cfitsio build (Debian's is; fits_is_reentrant says).
  const bool overlap_writes = threads > 1 && !checkpoints && fits_is_reentrant() != 0;
  std::future<void> writing;
  auto wait_for_writing = [&] {
    if (!writing.valid()) return;
    const auto t0 = Clock::now();
    writing.get();  // rethrows a write error
    maps.sink_seconds += seconds_since(t0);
  };
  for (long y0 = maps.rows_done; y0 < info.ny; y0 += rows_per_tile) {
    const auto t_wait = Clock::now();
    pending.get();  // rethrows a read error
    maps.read_wait_seconds += seconds_since(t_wait);
    std::swap(tile, next_tile);
    if (run.cancel && run.cancel->load()) {
      wait_for_writing();
      save_checkpoint();
      return RunStatus::kCancelled;
    }
    const long rows = std::min(rows_per_tile, info.ny - y0);
    if (y0 + rows < info.ny) start_read(y0 + rows, next_tile);
    // If processing below throws, wait for the read in flight before the buffers go out of scope.
    struct Join {
      std::future<void>& f;
      ~Join() {
        if (f.valid() && f.wait_for(std::chrono::seconds(0)) != std::future_status::deferred) f.wait();
      }
    } join{pending};
    const auto t_compute = Clock::now();
    if (sink) {
      FieldMaps& block = blocks[current];
      if (block.ny != rows || block.nx != info.nx) engine.InitMaps(rows, block);
      std::fill(std::begin(block.method_counts), std::end(block.method_counts), 0);
      block.me_iterations = 0;
      engine.Compute(tile, block, y0);  // sets every pixel of the block
      AddCounts(block, maps);
      TallyRows(block, 0, rows, maps);
      const std::size_t at = static_cast<std::size_t>(y0 * info.nx), np = static_cast<std::size_t>(rows * info.nx);
      for (int k : whole_slots)
        std::copy_n(block.slots[static_cast<std::size_t>(k)].begin(), np, maps.slots[static_cast<std::size_t>(k)].begin() + at);
      maps.compute_seconds += seconds_since(t_compute);
      wait_for_writing();  // the other block is free again
      writing = std::async(overlap_writes ? std::launch::async : std::launch::deferred,
                           [sink, &block, y0] { sink->Put(block, y0); });
      if (!overlap_writes) wait_for_writing();
      current ^= 1;
    } else {
      engine.Compute(tile, maps);
      TallyRows(maps, y0, rows, maps);
      maps.compute_seconds += seconds_since(t_compute);
    }
    maps.rows_done = y0 + rows;
    save_checkpoint();
    if (run.progress) run.progress(maps.rows_done, info.ny);
  }
  wait_for_writing();
  maps.read_seconds += read_seconds;
  const auto t_finish = Clock::now();
  engine.Finish(maps);
  maps.compute_seconds += seconds_since(t_finish);
  return RunStatus::kComplete;
}

}  // namespace zeeline
