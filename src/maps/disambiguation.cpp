// Acute-angle azimuth disambiguation against an FFT potential field (formulas in the header).
#include "zeeline/maps/disambiguation.hpp"

#include <cmath>
#include <complex>
#include <sstream>

#include <fftw3.h>

#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

constexpr double kDegToRad = constants::kPi / 180.0;

// RAII holders for FFTW buffers and plans (plans are made once per call; FFTW_ESTIMATE, no timing runs).
struct FftwReal {
  double* p;
  explicit FftwReal(std::size_t n) : p(fftw_alloc_real(n)) {}
  ~FftwReal() { fftw_free(p); }
};
struct FftwComplex {
  fftw_complex* p;
  explicit FftwComplex(std::size_t n) : p(fftw_alloc_complex(n)) {}
  ~FftwComplex() { fftw_free(p); }
};
struct FftwPlan {
  fftw_plan p;
  explicit FftwPlan(fftw_plan q) : p(q) {}
  ~FftwPlan() { fftw_destroy_plan(p); }
};

}  // namespace

std::string DisambiguationOptions::Validate() const {
  std::ostringstream m;
  if (!(min_btrans_sigma >= 0.0) || !std::isfinite(min_btrans_sigma))
    m << "disambiguation min B_TRANS sigma = " << min_btrans_sigma << " must be finite and >= 0";
  else if (smoothing_passes < 0 || smoothing_passes > 20)
    m << "disambiguation smoothing passes = " << smoothing_passes << " must be in [0, 20]";
  return m.str();
}

void PotentialTransverseField(long nx, long ny, const std::vector<double>& bz, std::vector<double>& bx,
                              std::vector<double>& by) {
  if (nx < 2 || ny < 2) throw OptionError("potential field: map size " + std::to_string(nx) + " x " +
                                          std::to_string(ny) + " must be at least 2 x 2");
  const std::size_t np = static_cast<std::size_t>(nx * ny);
  if (bz.size() != np) throw OptionError("potential field: B_LOS has " + std::to_string(bz.size()) +
                                         " values for a " + std::to_string(nx) + " x " + std::to_string(ny) + " map");
  const long mx = 2 * nx, my = 2 * ny, mxc = mx / 2 + 1;  // zero-padded sizes; r2c keeps mx/2 + 1 columns
  const std::size_t nreal = static_cast<std::size_t>(mx * my), ncplx = static_cast<std::size_t>(my * mxc);
  FftwReal real(nreal);
  FftwComplex bzk(ncplx), work(ncplx);
  // FFTW row-major: n0 = my (rows, y), n1 = mx (columns, x).
  FftwPlan forward(fftw_plan_dft_r2c_2d(static_cast<int>(my), static_cast<int>(mx), real.p, bzk.p, FFTW_ESTIMATE));
  FftwPlan backward(fftw_plan_dft_c2r_2d(static_cast<int>(my), static_cast<int>(mx), work.p, real.p, FFTW_ESTIMATE));
  for (std::size_t i = 0; i < nreal; ++i) real.p[i] = 0.0;
  for (long y = 0; y < ny; ++y)
    for (long x = 0; x < nx; ++x) {
      const double v = bz[static_cast<std::size_t>(y * nx + x)];
      real.p[y * mx + x] = std::isfinite(v) ? v : 0.0;
    }
  fftw_execute(forward.p);

  const double norm = 1.0 / static_cast<double>(nreal);  // FFTW transforms are unnormalised
  auto transverse = [&](bool along_x, std::vector<double>& out) {
    for (long iy = 0; iy < my; ++iy) {
      const double ky = 2.0 * constants::kPi * static_cast<double>(iy <= my / 2 ? iy : iy - my) / static_cast<double>(my);
      for (long ix = 0; ix < mxc; ++ix) {
        const double kx = 2.0 * constants::kPi * static_cast<double>(ix) / static_cast<double>(mx);
        const double k = std::hypot(kx, ky);
        const std::size_t i = static_cast<std::size_t>(iy * mxc + ix);
        if (k == 0.0) {
          work.p[i][0] = work.p[i][1] = 0.0;
          continue;
        }
        // B^ = -i (k_c / |k|) Bz^ : (a + i b)(-i c) = c b - i c a.
        const double c = (along_x ? kx : ky) / k;
        const double a = bzk.p[i][0], b = bzk.p[i][1];
        work.p[i][0] = c * b * norm;
        work.p[i][1] = -c * a * norm;
      }
    }
    fftw_execute(backward.p);  // overwrites work (c2r destroys its input); bzk is kept
    out.assign(np, 0.0);
    for (long y = 0; y < ny; ++y)
      for (long x = 0; x < nx; ++x) out[static_cast<std::size_t>(y * nx + x)] = real.p[y * mx + x];
  };
  transverse(true, bx);
  transverse(false, by);
}

void DisambiguateAzimuth(long nx, long ny, const std::vector<float>& blos, const std::vector<float>& btrans,
                         const std::vector<float>& btrans_err, std::vector<float>& azimuth,
                         std::vector<std::int16_t>& flags, const DisambiguationOptions& o) {
  const std::string problem = o.Validate();
  if (!problem.empty()) throw OptionError(problem);
  const std::size_t np = static_cast<std::size_t>(nx * ny);
  if (blos.size() != np || btrans.size() != np || azimuth.size() != np || (!btrans_err.empty() && btrans_err.size() != np))
    throw OptionError("disambiguation: B_LOS, B_TRANS, B_TRANS_SIGMA and B_AZIM must all have " + std::to_string(np) +
                      " values (" + std::to_string(nx) + " x " + std::to_string(ny) + ")");
  std::vector<double> bz(blos.begin(), blos.end()), bx, by;
  PotentialTransverseField(nx, ny, bz, bx, by);

  flags.assign(np, kDisambigNone);
  for (std::size_t i = 0; i < np; ++i) {
    const double chi = azimuth[i];
    if (!std::isfinite(chi)) continue;
    double a = std::fmod(chi, 180.0);
    if (a < 0.0) a += 180.0;
    const double dot = bx[i] * std::cos(a * kDegToRad) + by[i] * std::sin(a * kDegToRad);
    if (dot < 0.0) a += 180.0;
    azimuth[i] = static_cast<float>(a >= 360.0 ? a - 360.0 : a);
    const bool strong = btrans_err.empty() || (std::isfinite(btrans[i]) && std::isfinite(btrans_err[i]) &&
                                               btrans[i] >= o.min_btrans_sigma * btrans_err[i]);
    flags[i] = strong ? kDisambigAcute : kDisambigWeak;
  }

  SmoothAzimuth(nx, ny, btrans, azimuth, flags, o.smoothing_passes);
}

long SmoothAzimuth(long nx, long ny, const std::vector<float>& btrans, std::vector<float>& azimuth,
                   std::vector<std::int16_t>& flags, int passes) {
  const std::size_t np = static_cast<std::size_t>(nx * ny);
  if (btrans.size() != np || azimuth.size() != np || flags.size() != np)
    throw OptionError("azimuth smoothing: B_TRANS, B_AZIM and flags must all have " + std::to_string(np) + " values");
  // Jacobi style: decisions of one pass use the previous pass's azimuths.
  std::vector<float> next;
  long flipped = 0;
  for (int pass = 0; pass < passes; ++pass) {
    next = azimuth;
    long changed = 0;
    for (long y = 0; y < ny; ++y)
      for (long x = 0; x < nx; ++x) {
        const std::size_t i = static_cast<std::size_t>(y * nx + x);
        if (flags[i] == kDisambigNone) continue;
        double sx = 0.0, sy = 0.0;
        for (long dy = -1; dy <= 1; ++dy)
          for (long dx = -1; dx <= 1; ++dx) {
            const long xx = x + dx, yy = y + dy;
            if ((dx == 0 && dy == 0) || xx < 0 || yy < 0 || xx >= nx || yy >= ny) continue;
            const std::size_t j = static_cast<std::size_t>(yy * nx + xx);
            if (flags[j] == kDisambigNone || !std::isfinite(btrans[j])) continue;
            sx += btrans[j] * std::cos(azimuth[j] * kDegToRad);
            sy += btrans[j] * std::sin(azimuth[j] * kDegToRad);
          }
        const double dot = sx * std::cos(azimuth[i] * kDegToRad) + sy * std::sin(azimuth[i] * kDegToRad);
        if (dot < 0.0) {
          const double a = azimuth[i] + 180.0;
          next[i] = static_cast<float>(a >= 360.0 ? a - 360.0 : a);
          flags[i] = kDisambigSmoothed;
          ++changed;
        }
      }
    azimuth.swap(next);
    flipped += changed;
    if (changed == 0) break;
  }
  return flipped;
}

}  // namespace zeeline
