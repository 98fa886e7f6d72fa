#include "zeeline/polarimetry/jones.hpp"

#include <cmath>

namespace zeeline::polarimetry {
namespace {
constexpr double kDeg = 3.14159265358979323846 / 180.0;

Jones Rotation(double angle_deg) {
  const double c = std::cos(angle_deg * kDeg), s = std::sin(angle_deg * kDeg);
  Jones r;
  r << c, -s, s, c;
  return r;
}
}  // namespace

Jones JonesPolariser(double axis_deg, double k_parallel, double k_perpendicular) {
  Jones j0 = Jones::Zero();
  j0(0, 0) = std::sqrt(k_parallel);
  j0(1, 1) = std::sqrt(k_perpendicular);
  return Rotation(axis_deg) * j0 * Rotation(-axis_deg);
}

Jones JonesRetarder(double fast_axis_deg, double retardance_deg) {
  Jones j0 = Jones::Zero();
  j0(0, 0) = 1.0;
  j0(1, 1) = std::polar(1.0, retardance_deg * kDeg);
  return Rotation(fast_axis_deg) * j0 * Rotation(-fast_axis_deg);
}

Jones JonesRotator(double rotation_deg) { return Rotation(rotation_deg); }

Eigen::Matrix4cd CoherencyToStokes() {
  const std::complex<double> i(0.0, 1.0);
  Eigen::Matrix4cd a;
  a << 1.0, 0.0, 0.0, 1.0,  //
      1.0, 0.0, 0.0, -1.0,  //
      0.0, 1.0, 1.0, 0.0,  //
      0.0, -i, i, 0.0;
  return a;
}

Mueller MuellerFromJones(const Jones& jones) {
  const Jones jc = jones.conjugate();
  Eigen::Matrix4cd kron;
  for (int a = 0; a < 2; ++a)
    for (int b = 0; b < 2; ++b)
      for (int c = 0; c < 2; ++c)
        for (int d = 0; d < 2; ++d) kron(2 * a + b, 2 * c + d) = jones(a, c) * jc(b, d);
  const Eigen::Matrix4cd a = CoherencyToStokes();
  return (a * kron * a.inverse()).real();
}

Stokes StokesOfField(const Eigen::Vector2cd& e) {
  const std::complex<double> xy = e(0) * std::conj(e(1));
  return Stokes(std::norm(e(0)) + std::norm(e(1)), std::norm(e(0)) - std::norm(e(1)), 2.0 * xy.real(),
                2.0 * xy.imag());
}

}  // namespace zeeline::polarimetry
