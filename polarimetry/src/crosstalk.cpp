#include "zeeline/polarimetry/crosstalk.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "zeeline/core/errors.hpp"
#include "zeeline/maps/data_sanity.hpp"

namespace zeeline::polarimetry {
namespace {

struct Sums {  // through-origin regression y = c x
  double xx = 0.0, xy = 0.0, yy = 0.0;
  long long n = 0;
  void Add(double x, double y) {
    xx += x * x;
    xy += x * y;
    yy += y * y;
    ++n;
  }
  double Slope() const { return xx > 0.0 ? xy / xx : std::nan(""); }
  double Sigma() const {
    if (n < 2 || !(xx > 0.0)) return std::nan("");
    const double c = Slope();
    const double rss = std::max(yy - 2.0 * c * xy + c * c * xx, 0.0);
    return std::sqrt(rss / static_cast<double>(n - 1)) / std::sqrt(xx);
  }
};

// The data-sanity check of the maps (maps/data_sanity.hpp) applied to whole pixels, so that a fill value, a
// NaN, an empty pixel or a wrong cube layout stays out of every regression instead of dominating it.
class PixelScreen {
 public:
  PixelScreen(const CubeInfo& info, const int idx[4]) : info_(info) {
    for (int s = 0; s < 4; ++s) idx_[s] = idx[s];
  }
  // The cube's level from the first tile's clean I samples (strided to ~1e6), as the maps engine does.
  void SetLevel(const CubeTile& first_tile) {
    const DataSanityLimits type_range = MakeSanityLimits(info_.bitpix, 0.0, 0.0);
    const std::size_t nw = info_.wavelength_nm.size();
    const std::size_t stride = std::max<std::size_t>(1, static_cast<std::size_t>(first_tile.n_pixels()) * nw / (1u << 20));
    std::vector<double> levels;
    for (long p = 0; p < first_tile.n_pixels(); ++p) {
      const PixelSpectrum s = Spectrum(first_tile, p);
      if (CheckSampleRange(s, type_range)) continue;
      for (std::size_t k = static_cast<std::size_t>(p) % stride; k < nw; k += stride) levels.push_back(s.I[k]);
    }
    limits_ = MakeSanityLimits(info_.bitpix, MedianLevel(std::move(levels)), 0.0);
  }
  void SetContinuum(const std::vector<char>& cont) {
    continuum_.clear();
    for (std::size_t w = 0; w < cont.size(); ++w)
      if (cont[w]) continuum_.push_back(w);
  }
  // QUALITY bits of the failed tests (0: usable). Before SetContinuum only the sample range is checked.
  std::uint32_t Check(const CubeTile& tile, long p) const {
    const PixelSpectrum s = Spectrum(tile, p);
    return continuum_.empty() ? CheckSampleRange(s, limits_) : CheckPixelSanity(s, continuum_, limits_);
  }

 private:
  PixelSpectrum Spectrum(const CubeTile& tile, long p) const {
    return PixelSpectrum{info_.wavelength_nm.data(), info_.wavelength_nm.size(), tile.Spectrum(p, idx_[0]),
                         tile.Spectrum(p, idx_[1]), tile.Spectrum(p, idx_[2]), tile.Spectrum(p, idx_[3])};
  }
  const CubeInfo& info_;
  int idx_[4];
  DataSanityLimits limits_;
  std::vector<std::size_t> continuum_;
};

}  // namespace

std::string CrosstalkOptions::Validate() const {
  std::ostringstream m;
  if (!(continuum_depth_fraction > 0.0 && continuum_depth_fraction < 0.5))
    m << "continuum depth fraction = " << continuum_depth_fraction << ": need 0 < value < 0.5";
  else if (!(strong_v_sigma > 0.0) || !std::isfinite(strong_v_sigma))
    m << "strong-V threshold = " << strong_v_sigma << " sigma: need a finite value > 0";
  else if (min_continuum_samples < 1)
    m << "minimum continuum samples = " << min_continuum_samples << ": need >= 1";
  else if (min_strong_v_samples < 3)
    m << "minimum strong-V samples = " << min_strong_v_samples << ": need >= 3";
  for (const auto& r : continuum_ranges_nm)
    if (m.str().empty() && !(r.first < r.second))
      m << "continuum range " << r.first << ":" << r.second << " nm: need start < end";
  return m.str();
}

Eigen::Matrix4d CrosstalkResult::CorrectionMatrix() const {
  const double bq = std::isfinite(v_to_q) ? v_to_q : 0.0, bu = std::isfinite(v_to_u) ? v_to_u : 0.0;
  Eigen::Matrix4d c = Eigen::Matrix4d::Identity();
  c(3, 0) = -i_to_v;
  c(1, 0) = -i_to_q + bq * i_to_v;
  c(1, 3) = -bq;
  c(2, 0) = -i_to_u + bu * i_to_v;
  c(2, 3) = -bu;
  return c;
}

CrosstalkResult EstimateCrosstalk(CubeReader& reader, const CrosstalkOptions& o) {
  if (const std::string bad = o.Validate(); !bad.empty()) throw OptionError(bad);
  const CubeInfo& info = reader.info();
  int idx[4];
  const StokesParameter all[4] = {StokesParameter::kI, StokesParameter::kQ, StokesParameter::kU, StokesParameter::kV};
  for (int s = 0; s < 4; ++s) {
    idx[s] = info.StokesIndex(all[s]);
    if (idx[s] < 0)
      throw CalibrationError(info.path + ": Stokes " + ToString(all[s]) +
                             " is missing; crosstalk needs all of I, Q, U and V on the STOKES axis");
  }
  const long nw = info.n_wavelength();
  CrosstalkResult r;
  CubeTile tile;
  PixelScreen screen(info, idx);
  reader.Rewind();
  if (reader.NextTile(tile)) screen.SetLevel(tile);

  // Pass 1: mean I profile -> continuum samples.
  std::vector<char> cont(static_cast<std::size_t>(nw), 0);
  if (!o.continuum_ranges_nm.empty()) {
    r.continuum_automatic = false;
    for (long w = 0; w < nw; ++w)
      for (const auto& rg : o.continuum_ranges_nm)
        if (info.wavelength_nm[static_cast<std::size_t>(w)] >= rg.first &&
            info.wavelength_nm[static_cast<std::size_t>(w)] <= rg.second)
          cont[static_cast<std::size_t>(w)] = 1;
  } else {
    std::vector<double> sum(static_cast<std::size_t>(nw), 0.0);
    std::vector<long long> count(static_cast<std::size_t>(nw), 0);
    long long clean = 0;
    reader.Rewind();
    while (reader.NextTile(tile))
      for (long p = 0; p < tile.n_pixels(); ++p) {
        if (screen.Check(tile, p)) continue;
        ++clean;
        const double* i = tile.Spectrum(p, idx[0]);
        for (long w = 0; w < nw; ++w)
          if (std::isfinite(i[w])) {
            sum[static_cast<std::size_t>(w)] += i[w];
            ++count[static_cast<std::size_t>(w)];
          }
      }
    if (clean == 0)
      throw CalibrationError(info.path + ": no usable pixel: every pixel has NaN/Inf or absurd samples "
                             "(data-sanity check, docs/errors.md)");
    std::vector<double> mean(static_cast<std::size_t>(nw), std::nan(""));
    for (long w = 0; w < nw; ++w)
      if (count[static_cast<std::size_t>(w)] > 0)
        mean[static_cast<std::size_t>(w)] = sum[static_cast<std::size_t>(w)] / static_cast<double>(count[static_cast<std::size_t>(w)]);
    std::vector<double> smooth = mean;
    for (long w = 1; w + 1 < nw; ++w)
      smooth[static_cast<std::size_t>(w)] =
          (mean[static_cast<std::size_t>(w - 1)] + mean[static_cast<std::size_t>(w)] + mean[static_cast<std::size_t>(w + 1)]) / 3.0;
    double mx = -HUGE_VAL, mn = HUGE_VAL;
    for (double v : smooth)
      if (std::isfinite(v)) {
        mx = std::max(mx, v);
        mn = std::min(mn, v);
      }
    const double threshold = mx - o.continuum_depth_fraction * (mx - mn);
    for (long w = 0; w < nw; ++w)
      cont[static_cast<std::size_t>(w)] = std::isfinite(mean[static_cast<std::size_t>(w)]) && mean[static_cast<std::size_t>(w)] >= threshold;
  }
  for (long w = 0; w < nw; ++w)
    if (cont[static_cast<std::size_t>(w)]) r.continuum_wavelengths_nm.push_back(info.wavelength_nm[static_cast<std::size_t>(w)]);
  if (static_cast<int>(r.continuum_wavelengths_nm.size()) < o.min_continuum_samples)
    throw CalibrationError(info.path + ": " + std::to_string(r.continuum_wavelengths_nm.size()) +
                           " continuum wavelengths found (" + std::to_string(o.min_continuum_samples) +
                           " needed)" + (r.continuum_automatic ? "; give them with --continuum START:END,..." : " in --continuum"));

  // Pass 2: I -> Q, U, V on the continuum.
  screen.SetContinuum(cont);
  Sums sq, su, sv;
  long long pixels = 0;
  reader.Rewind();
  while (reader.NextTile(tile))
    for (long p = 0; p < tile.n_pixels(); ++p) {
      ++pixels;
      if (const std::uint32_t bits = screen.Check(tile, p)) {
        ++r.rejected_pixels;
        for (int b = 0; b < 32; ++b)
          if (bits & (1u << b)) ++r.rejected_by_bit[b];
        continue;
      }
      const double *i = tile.Spectrum(p, idx[0]), *q = tile.Spectrum(p, idx[1]), *u = tile.Spectrum(p, idx[2]),
                   *v = tile.Spectrum(p, idx[3]);
      for (long w = 0; w < nw; ++w)
        if (cont[static_cast<std::size_t>(w)] && std::isfinite(i[w]) && std::isfinite(q[w]) && std::isfinite(u[w]) &&
            std::isfinite(v[w])) {
          sq.Add(i[w], q[w]);
          su.Add(i[w], u[w]);
          sv.Add(i[w], v[w]);
        }
    }
  if (r.rejected_pixels > 0) {
    std::string why;
    for (int b = 0; b < 32; ++b)
      if (r.rejected_by_bit[b] > 0)
        why += std::string(why.empty() ? "" : ", ") + QualityBitNames(1u << b).front() + " " + std::to_string(r.rejected_by_bit[b]);
    if (r.rejected_pixels == pixels)
      throw CalibrationError(info.path + ": no usable pixel: all " + std::to_string(pixels) +
                             " fail the data-sanity check (" + why + "; docs/errors.md)");
    r.warnings.push_back(std::to_string(r.rejected_pixels) + " of " + std::to_string(pixels) +
                         " pixels left out by the data-sanity check (" + why + ")");
  }
  if (sq.n < 2 || !(sq.xx > 0.0))
    throw CalibrationError(info.path + ": no usable continuum samples (all NaN or zero intensity)");
  r.continuum_samples = sq.n;
  r.i_to_q = sq.Slope();
  r.i_to_u = su.Slope();
  r.i_to_v = sv.Slope();
  r.i_to_q_err = sq.Sigma();
  r.i_to_u_err = su.Sigma();
  r.i_to_v_err = sv.Sigma();
  r.v_noise = std::sqrt(std::max(sv.yy - 2.0 * r.i_to_v * sv.xy + r.i_to_v * r.i_to_v * sv.xx, 0.0) /
                        static_cast<double>(sv.n));

  // Pass 3: V -> Q, U in strong-V samples of the I-corrected data.
  Sums bq, bu;
  const double cut = o.strong_v_sigma * r.v_noise;
  reader.Rewind();
  while (reader.NextTile(tile))
    for (long p = 0; p < tile.n_pixels(); ++p) {
      if (screen.Check(tile, p)) continue;
      const double *i = tile.Spectrum(p, idx[0]), *q = tile.Spectrum(p, idx[1]), *u = tile.Spectrum(p, idx[2]),
                   *v = tile.Spectrum(p, idx[3]);
      for (long w = 0; w < nw; ++w) {
        if (!(std::isfinite(i[w]) && std::isfinite(q[w]) && std::isfinite(u[w]) && std::isfinite(v[w]))) continue;
        const double vc = v[w] - r.i_to_v * i[w];
        if (!(std::fabs(vc) > cut)) continue;
        bq.Add(vc, q[w] - r.i_to_q * i[w]);
        bu.Add(vc, u[w] - r.i_to_u * i[w]);
      }
    }
  r.strong_v_samples = bq.n;
  if (bq.n >= o.min_strong_v_samples) {
    r.v_estimated = true;
    r.v_to_q = bq.Slope();
    r.v_to_u = bu.Slope();
    r.v_to_q_err = bq.Sigma();
    r.v_to_u_err = bu.Sigma();
  } else {
    r.v_to_q = r.v_to_u = r.v_to_q_err = r.v_to_u_err = std::nan("");
    r.warnings.push_back("only " + std::to_string(bq.n) + " samples with |V| > " + std::to_string(o.strong_v_sigma) +
                         " sigma (" + std::to_string(o.min_strong_v_samples) +
                         " needed): V -> Q, U not estimated and not corrected");
  }
  return r;
}

}  // namespace zeeline::polarimetry
