// FFT convolution with a Gaussian and/or tabulated instrument profile (see the header).
#include "zeeline/synth/instrument_profile.hpp"

#include <fftw3.h>

#include <algorithm>
#include <cmath>
#include <mutex>
#include <sstream>

#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

std::mutex& PlannerMutex() {
  static std::mutex m;
  return m;
}

// Smallest integer >= n whose prime factors are 2, 3, 5 or 7 (fast FFTW sizes).
int SmoothSize(int n) {
  for (int m = std::max(n, 2);; ++m) {
    int r = m;
    for (int p : {2, 3, 5, 7})
      while (r % p == 0) r /= p;
    if (r == 1) return m;
  }
}

double TableHalfWidth_nm(const InstrumentProfileOptions& o) {
  if (o.table_offset_nm.empty()) return 0.0;
  return std::max(std::fabs(o.table_offset_nm.front()), std::fabs(o.table_offset_nm.back()));
}

}  // namespace

std::string InstrumentProfileOptions::Validate() const {
  std::ostringstream msg;
  if (!std::isfinite(gaussian_fwhm_nm) || gaussian_fwhm_nm < 0.0) {
    msg << "gaussian_fwhm_nm = " << gaussian_fwhm_nm << " is outside the allowed range [0, inf)";
  } else if (table_offset_nm.size() != table_response.size()) {
    msg << "table_offset_nm has " << table_offset_nm.size() << " entries but table_response has "
        << table_response.size() << " (must be equal)";
  } else if (!table_offset_nm.empty()) {
    if (table_offset_nm.size() < 2) {
      msg << "table_offset_nm has " << table_offset_nm.size() << " entries (need at least 2)";
      return msg.str();
    }
    double sum = 0.0;
    for (std::size_t i = 0; i < table_offset_nm.size(); ++i) {
      if (!std::isfinite(table_offset_nm[i]) || (i > 0 && table_offset_nm[i] <= table_offset_nm[i - 1])) {
        msg << "table_offset_nm[" << i << "] = " << table_offset_nm[i] << " (offsets must be finite and ascending)";
        return msg.str();
      }
      if (!std::isfinite(table_response[i]) || table_response[i] < 0.0) {
        msg << "table_response[" << i << "] = " << table_response[i] << " is outside the allowed range [0, inf)";
        return msg.str();
      }
      sum += table_response[i];
    }
    if (sum <= 0.0) msg << "table_response sums to " << sum << " (must be positive)";
  }
  return msg.str();
}

double MacroturbulenceFwhm_nm(double wavelength_nm, double vmac_kms) {
  return 2.0 * std::sqrt(std::log(2.0)) * wavelength_nm * vmac_kms / (constants::kSpeedOfLight_m_s * 1e-3);
}

struct ProfileConvolver::Impl {
  int n = 0, pad = 0, nfft = 0;
  bool identity = true;
  double* real = nullptr;
  fftw_complex* spec = nullptr;
  std::vector<double> transfer_re, transfer_im;  // kernel transfer function, including 1/nfft
  fftw_plan forward = nullptr, backward = nullptr;

  ~Impl() {
    std::lock_guard<std::mutex> lock(PlannerMutex());
    if (forward) fftw_destroy_plan(forward);
    if (backward) fftw_destroy_plan(backward);
    if (real) fftw_free(real);
    if (spec) fftw_free(spec);
  }
};

ProfileConvolver::ProfileConvolver(int n_points, double step_nm, const InstrumentProfileOptions& options)
    : impl_(std::make_unique<Impl>()) {
  const std::string problem = options.Validate();
  if (!problem.empty()) throw OptionError("instrument profile: " + problem);
  if (n_points < 2) throw OptionError("instrument profile: n_points = " + std::to_string(n_points) + " (need >= 2)");
  if (!std::isfinite(step_nm) || step_nm <= 0.0)
    throw OptionError("instrument profile: step_nm = " + std::to_string(step_nm) + " must be positive");
  Impl& m = *impl_;
  m.n = n_points;
  m.identity = options.IsIdentity();
  if (m.identity) return;

  const double half_extent_nm = 4.0 * options.gaussian_fwhm_nm + TableHalfWidth_nm(options);
  m.pad = static_cast<int>(std::ceil(half_extent_nm / step_nm)) + 2;
  m.nfft = SmoothSize(m.n + 2 * m.pad);
  const int nc = m.nfft / 2 + 1;
  {
    std::lock_guard<std::mutex> lock(PlannerMutex());
    m.real = fftw_alloc_real(static_cast<std::size_t>(m.nfft));
    m.spec = fftw_alloc_complex(static_cast<std::size_t>(nc));
    m.forward = fftw_plan_dft_r2c_1d(m.nfft, m.real, m.spec, FFTW_ESTIMATE);
    m.backward = fftw_plan_dft_c2r_1d(m.nfft, m.spec, m.real, FFTW_ESTIMATE);
  }
  m.transfer_re.assign(static_cast<std::size_t>(nc), 1.0 / m.nfft);
  m.transfer_im.assign(static_cast<std::size_t>(nc), 0.0);

  if (options.gaussian_fwhm_nm > 0.0) {
    const double sigma = options.gaussian_fwhm_nm / (2.0 * std::sqrt(2.0 * std::log(2.0)));
    for (int k = 0; k < nc; ++k) {
      const double freq = k / (m.nfft * step_nm);  // cycles per nm
      m.transfer_re[k] *= std::exp(-2.0 * constants::kPi * constants::kPi * sigma * sigma * freq * freq);
    }
  }
  if (!options.table_offset_nm.empty()) {
    // Sample the table at offsets j h (j = -pad..pad), circularly placed, then transform.
    std::fill(m.real, m.real + m.nfft, 0.0);
    const auto& x = options.table_offset_nm;
    const auto& r = options.table_response;
    double sum = 0.0;
    for (int j = -m.pad; j <= m.pad; ++j) {
      const double off = j * step_nm;
      if (off < x.front() || off > x.back()) continue;
      const auto it = std::upper_bound(x.begin(), x.end(), off);
      const std::size_t i1 = std::min<std::size_t>(static_cast<std::size_t>(it - x.begin()), x.size() - 1);
      const std::size_t i0 = i1 - 1;
      const double t = (off - x[i0]) / (x[i1] - x[i0]);
      const double value = r[i0] + t * (r[i1] - r[i0]);
      m.real[(j + m.nfft) % m.nfft] = value;
      sum += value;
    }
    if (!(sum > 0.0))
      throw OptionError("instrument profile: the tabulated response is zero at every grid offset (table "
                        "narrower than the wavelength step " + std::to_string(step_nm) + " nm?)");
    fftw_execute(m.forward);
    for (int k = 0; k < nc; ++k) {
      const double kr = m.spec[k][0] / sum, ki = m.spec[k][1] / sum;
      const double tr = m.transfer_re[k], ti = m.transfer_im[k];
      m.transfer_re[k] = tr * kr - ti * ki;
      m.transfer_im[k] = tr * ki + ti * kr;
    }
  }
}

ProfileConvolver::~ProfileConvolver() = default;
ProfileConvolver::ProfileConvolver(ProfileConvolver&&) noexcept = default;
ProfileConvolver& ProfileConvolver::operator=(ProfileConvolver&&) noexcept = default;

int ProfileConvolver::size() const { return impl_->n; }
int ProfileConvolver::fft_length() const { return impl_->nfft; }
bool ProfileConvolver::is_identity() const { return impl_->identity; }

void ProfileConvolver::Apply(Eigen::Ref<Eigen::ArrayXd> values) {
  Impl& m = *impl_;
  if (m.identity) return;
  if (values.size() != m.n)
    throw OptionError("instrument profile: spectrum has " + std::to_string(values.size()) +
                      " samples, the convolver was built for " + std::to_string(m.n));
  const int n = m.n, nfft = m.nfft;
  for (int i = 0; i < n; ++i) m.real[i] = values[i];
  // Constant extension: last value after the data, first value before it (wrapping to the end), and a
  // linear bridge in the unused middle of the padding.
  const double first = values[0], last = values[n - 1];
  const int tail_end = n + m.pad;          // [n, n+pad): last
  const int head_begin = nfft - m.pad;     // [nfft-pad, nfft): first
  for (int i = n; i < tail_end; ++i) m.real[i] = last;
  for (int i = head_begin; i < nfft; ++i) m.real[i] = first;
  const int gap = head_begin - tail_end;
  for (int i = 0; i < gap; ++i) m.real[tail_end + i] = last + (first - last) * (i + 1.0) / (gap + 1.0);
  fftw_execute(m.forward);
  const int nc = nfft / 2 + 1;
  for (int k = 0; k < nc; ++k) {
    const double sr = m.spec[k][0], si = m.spec[k][1];
    const double tr = m.transfer_re[k], ti = m.transfer_im[k];
    m.spec[k][0] = sr * tr - si * ti;
    m.spec[k][1] = sr * ti + si * tr;
  }
  fftw_execute(m.backward);
  for (int i = 0; i < n; ++i) values[i] = m.real[i];
}

void ProfileConvolver::Apply(StokesArray& stokes) {
  for (int s = 0; s < 4; ++s) Apply(stokes.col(s));
}

void ProfileConvolver::Apply(StokesJacobian& jacobian) {
  for (auto& d : jacobian.d) Apply(d);
}

}  // namespace zeeline
