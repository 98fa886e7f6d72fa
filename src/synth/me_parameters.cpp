#include "zeeline/synth/me_parameters.hpp"

#include <cmath>
#include <sstream>

namespace zeeline {

const char* MeParamName(MeParam p) {
  switch (p) {
    case MeParam::kField: return "b_total_gauss";
    case MeParam::kInclination: return "b_incl_deg";
    case MeParam::kAzimuth: return "b_azim_deg";
    case MeParam::kVlos: return "v_los_kms";
    case MeParam::kDopplerWidth: return "doppler_width_nm";
    case MeParam::kDamping: return "damping";
    case MeParam::kEta0: return "eta0";
    case MeParam::kS0: return "s0";
    case MeParam::kS1: return "s1";
    case MeParam::kFill: return "fill";
  }
  return "?";
}

namespace {
// Appends a message when v is not finite or outside [lo, hi].
bool OutOfRange(std::ostringstream& msg, const char* name, double v, double lo, double hi, const char* range) {
  if (std::isfinite(v) && v >= lo && v <= hi) return false;
  msg << name << " = " << v << " is outside the allowed range " << range;
  return true;
}
}  // namespace

std::string MeParameters::Validate() const {
  std::ostringstream msg;
  OutOfRange(msg, "b_total_gauss", field_gauss, 0.0, 1.0e6, "[0, 1e6] G") ||
      OutOfRange(msg, "b_incl_deg", inclination_deg, 0.0, 180.0, "[0, 180] deg") ||
      OutOfRange(msg, "b_azim_deg", azimuth_deg, -1.0e4, 1.0e4, "[-1e4, 1e4] deg") ||
      OutOfRange(msg, "v_los_kms", vlos_kms, -3.0e4, 3.0e4, "[-3e4, 3e4] km/s") ||
      OutOfRange(msg, "doppler_width_nm", doppler_width_nm, 1.0e-7, 10.0, "[1e-7, 10] nm") ||
      OutOfRange(msg, "damping", damping, 0.0, 100.0, "[0, 100]") ||
      OutOfRange(msg, "eta0", eta0, 0.0, 1.0e7, "[0, 1e7]") ||
      OutOfRange(msg, "s0", s0, -1.0e30, 1.0e30, "(finite)") ||
      OutOfRange(msg, "s1", s1, -1.0e30, 1.0e30, "(finite)") ||
      OutOfRange(msg, "fill", fill, 0.0, 1.0, "[0, 1]");
  return msg.str();
}

double MeParameters::Get(MeParam p) const {
  switch (p) {
    case MeParam::kField: return field_gauss;
    case MeParam::kInclination: return inclination_deg;
    case MeParam::kAzimuth: return azimuth_deg;
    case MeParam::kVlos: return vlos_kms;
    case MeParam::kDopplerWidth: return doppler_width_nm;
    case MeParam::kDamping: return damping;
    case MeParam::kEta0: return eta0;
    case MeParam::kS0: return s0;
    case MeParam::kS1: return s1;
    case MeParam::kFill: return fill;
  }
  return 0.0;
}

void MeParameters::Set(MeParam p, double value) {
  switch (p) {
    case MeParam::kField: field_gauss = value; break;
    case MeParam::kInclination: inclination_deg = value; break;
    case MeParam::kAzimuth: azimuth_deg = value; break;
    case MeParam::kVlos: vlos_kms = value; break;
    case MeParam::kDopplerWidth: doppler_width_nm = value; break;
    case MeParam::kDamping: damping = value; break;
    case MeParam::kEta0: eta0 = value; break;
    case MeParam::kS0: s0 = value; break;
    case MeParam::kS1: s1 = value; break;
    case MeParam::kFill: fill = value; break;
  }
}

}  // namespace zeeline
