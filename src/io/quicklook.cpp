#include "zeeline/io/quicklook.hpp"

#include "core/axis_ticks.hpp"

#include <cairo.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <memory>
#include <tuple>
#include <variant>

#include "io/atomic_file.hpp"
#include "io/fits_util.hpp"
#include "zeeline/core/constants.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/io/spatial_wcs.hpp"

namespace zeeline {

using io_detail::Num;

std::string ToString(ColourMapKind kind) {
  switch (kind) {
    case ColourMapKind::kDiverging: return "diverging";
    case ColourMapKind::kSequential: return "sequential";
    case ColourMapKind::kCyclic: return "cyclic";
  }
  return "?";
}

namespace {

constexpr double kPi = constants::kPi;
// D65 reference white used by Moreland (2009) for CIELAB.
constexpr double kWhiteX = 0.9505, kWhiteY = 1.0, kWhiteZ = 1.089;

struct Vec3 {
  double a, b, c;
};

// sRGB (IEC 61966-2-1) transfer functions.
double SrgbToLinear(double v) { return v <= 0.04045 ? v / 12.92 : std::pow((v + 0.055) / 1.055, 2.4); }
double LinearToSrgb(double v) { return v <= 0.0031308 ? 12.92 * v : 1.055 * std::pow(v, 1.0 / 2.4) - 0.055; }

double LabF(double t) { return t > 216.0 / 24389.0 ? std::cbrt(t) : (24389.0 / 27.0 * t + 16.0) / 116.0; }
double LabFInv(double t) { return t > 6.0 / 29.0 ? t * t * t : 3.0 * (6.0 / 29.0) * (6.0 / 29.0) * (t - 4.0 / 29.0); }

Vec3 RgbToLab(Vec3 rgb) {  // rgb 0..1 sRGB
  const double r = SrgbToLinear(rgb.a), g = SrgbToLinear(rgb.b), b = SrgbToLinear(rgb.c);
  const double x = 0.4124 * r + 0.3576 * g + 0.1805 * b;
  const double y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
  const double z = 0.0193 * r + 0.1192 * g + 0.9505 * b;
  const double fx = LabF(x / kWhiteX), fy = LabF(y / kWhiteY), fz = LabF(z / kWhiteZ);
  return {116.0 * fy - 16.0, 500.0 * (fx - fy), 200.0 * (fy - fz)};
}

Vec3 LabToRgb(Vec3 lab) {
  const double fy = (lab.a + 16.0) / 116.0, fx = fy + lab.b / 500.0, fz = fy - lab.c / 200.0;
  const double x = kWhiteX * LabFInv(fx), y = kWhiteY * LabFInv(fy), z = kWhiteZ * LabFInv(fz);
  const double r = 3.2406 * x - 1.5372 * y - 0.4986 * z;
  const double g = -0.9689 * x + 1.8758 * y + 0.0415 * z;
  const double b = 0.0557 * x - 0.2040 * y + 1.0570 * z;
  auto c = [](double v) { return std::clamp(LinearToSrgb(std::clamp(v, 0.0, 1.0)), 0.0, 1.0); };
  return {c(r), c(g), c(b)};
}

Vec3 LabToMsh(Vec3 lab) {
  const double m = std::sqrt(lab.a * lab.a + lab.b * lab.b + lab.c * lab.c);
  return {m, m > 0 ? std::acos(lab.a / m) : 0.0, std::atan2(lab.c, lab.b)};
}
Vec3 MshToLab(Vec3 msh) {
  return {msh.a * std::cos(msh.b), msh.a * std::sin(msh.b) * std::cos(msh.c), msh.a * std::sin(msh.b) * std::sin(msh.c)};
}

// Moreland (2009) sect. 5: hue spin for interpolating towards an unsaturated colour.
double AdjustHue(Vec3 sat, double m_unsat) {
  if (sat.a >= m_unsat) return sat.c;
  const double spin = sat.b * std::sqrt(m_unsat * m_unsat - sat.a * sat.a) / (sat.a * std::sin(sat.b));
  return sat.c > -kPi / 3.0 ? sat.c + spin : sat.c - spin;
}

Vec3 MorelandDiverging(double t) {
  Vec3 c1 = LabToMsh(RgbToLab({59 / 255.0, 76 / 255.0, 192 / 255.0}));
  Vec3 c2 = LabToMsh(RgbToLab({180 / 255.0, 4 / 255.0, 38 / 255.0}));
  if (c1.b > 0.05 && c2.b > 0.05 && std::fabs(c1.c - c2.c) > kPi / 3.0) {
    const double m_mid = std::max({c1.a, c2.a, 88.0});
    if (t < 0.5) {
      c2 = {m_mid, 0.0, 0.0};
      t = 2.0 * t;
    } else {
      c1 = {m_mid, 0.0, 0.0};
      t = 2.0 * t - 1.0;
    }
  }
  if (c1.b < 0.05 && c2.b > 0.05) c1.c = AdjustHue(c2, c1.a);
  else if (c2.b < 0.05 && c1.b > 0.05) c2.c = AdjustHue(c1, c2.a);
  const Vec3 m{(1 - t) * c1.a + t * c2.a, (1 - t) * c1.b + t * c2.b, (1 - t) * c1.c + t * c2.c};
  return LabToRgb(MshToLab(m));
}

// Green (2011) eq. 2.
Vec3 Cubehelix(double t) {
  const double start = 0.3, rotations = -0.9, hue = 1.4;
  const double l = 0.08 + 0.84 * t;
  const double amp = hue * l * (1.0 - l) / 2.0;
  const double phi = 2.0 * kPi * (start / 3.0 + 1.0 + rotations * l);
  const double c = std::cos(phi), s = std::sin(phi);
  auto cl = [](double v) { return std::clamp(v, 0.0, 1.0); };
  return {cl(l + amp * (-0.14861 * c + 1.78277 * s)), cl(l + amp * (-0.29227 * c - 0.90649 * s)),
          cl(l + amp * (1.97294 * c))};
}

Vec3 LabCircle(double t) {
  const double h = 2.0 * kPi * t + 0.6;
  return LabToRgb({65.0, 35.0 * std::cos(h), 35.0 * std::sin(h)});
}

struct Lut {
  std::array<std::array<unsigned char, 3>, 1024> rgb;
};

std::size_t LutIndex(double t) {
  constexpr double kLast = static_cast<double>(std::tuple_size<decltype(Lut::rgb)>::value - 1);
  return static_cast<std::size_t>(std::lround(t * kLast));
}

const Lut& GetLut(ColourMapKind kind) {
  static const auto build = [](ColourMapKind k) {
    Lut lut;
    for (std::size_t i = 0; i < lut.rgb.size(); ++i) {
      const double t = static_cast<double>(i) / static_cast<double>(lut.rgb.size() - 1);
      const Vec3 c = k == ColourMapKind::kDiverging ? MorelandDiverging(t)
                     : k == ColourMapKind::kCyclic  ? LabCircle(t)
                                                    : Cubehelix(t);
      lut.rgb[i] = {static_cast<unsigned char>(std::lround(c.a * 255.0)),
                    static_cast<unsigned char>(std::lround(c.b * 255.0)),
                    static_cast<unsigned char>(std::lround(c.c * 255.0))};
    }
    return lut;
  };
  static const Lut diverging = build(ColourMapKind::kDiverging);
  static const Lut sequential = build(ColourMapKind::kSequential);
  static const Lut cyclic = build(ColourMapKind::kCyclic);
  return kind == ColourMapKind::kDiverging ? diverging : kind == ColourMapKind::kCyclic ? cyclic : sequential;
}

struct CairoSurface {
  cairo_surface_t* s = nullptr;
  cairo_t* cr = nullptr;
  CairoSurface(int w, int h) {
    s = cairo_image_surface_create(CAIRO_FORMAT_RGB24, w, h);
    cr = cairo_create(s);
  }
  ~CairoSurface() {
    if (cr) cairo_destroy(cr);
    if (s) cairo_surface_destroy(s);
  }
  CairoSurface(const CairoSurface&) = delete;
  CairoSurface& operator=(const CairoSurface&) = delete;
};

struct PanelGeometry {
  static constexpr double kLeft = 64, kTop = 34, kBottom = 44;
  double map_w, map_h;  // drawn map size
  double right = 92;    // colour bar, or the legend of a categorical map
  double width() const { return kLeft + map_w + right; }
  double height() const { return kTop + map_h + kBottom; }
};

PanelGeometry Geometry(const QuicklookMap& m, int size_px) {
  const double longest = static_cast<double>(std::max(m.nx, m.ny));
  double scale = size_px / longest;
  if (scale >= 1.0) scale = std::floor(scale);  // integer zoom keeps pixels square and sharp
  PanelGeometry g{std::max(1.0, std::round(static_cast<double>(m.nx) * scale)),
                  std::max(1.0, std::round(static_cast<double>(m.ny) * scale))};
  if (!m.categories.empty()) {
    std::size_t longest_name = 0;
    for (const auto& c : m.categories) longest_name = std::max(longest_name, c.name.size());
    g.right = 40 + 6.5 * static_cast<double>(longest_name);
  }
  return g;
}

// Colour of a categorical pixel: its category, or grey for a value without one.
std::array<unsigned char, 3> CategoryColour(const QuicklookMap& m, double v) {
  double key = v;
  if (m.bit_flags && v != 0.0) {
    const auto bits = static_cast<std::uint32_t>(v);
    int b = 0;
    while (b < 31 && !(bits & (1u << b))) ++b;
    key = static_cast<double>(1u << b);
  }
  for (const auto& c : m.categories)
    if (c.value == key) return c.rgb;
  return {128, 128, 128};
}

void Text(cairo_t* cr, double x, double y, const std::string& s, double size, double align_x, double align_y,
          bool bold = false) {
  cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL,
                         bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
  cairo_set_font_size(cr, size);
  cairo_text_extents_t e;
  cairo_text_extents(cr, s.c_str(), &e);
  cairo_move_to(cr, x - e.x_bearing - align_x * e.width, y - e.y_bearing - align_y * e.height);
  cairo_show_text(cr, s.c_str());
}

void DrawPanel(cairo_t* cr, double ox, double oy, const QuicklookMap& m, const PanelGeometry& g,
               const QuicklookOptions& options) {
  const auto lim = ColourLimits(m, options);
  const Lut& lut = GetLut(m.kind);
  // Map image: one cairo pixel per map pixel, scaled with nearest-neighbour filtering; y up.
  cairo_surface_t* img = cairo_image_surface_create(CAIRO_FORMAT_RGB24, static_cast<int>(m.nx), static_cast<int>(m.ny));
  cairo_surface_flush(img);
  unsigned char* data = cairo_image_surface_get_data(img);
  const int stride = cairo_image_surface_get_stride(img);
  const double span = lim[1] - lim[0];
  for (long y = 0; y < m.ny; ++y) {
    auto* row = reinterpret_cast<std::uint32_t*>(data + (m.ny - 1 - y) * stride);
    for (long x = 0; x < m.nx; ++x) {
      const double v = m.values[static_cast<std::size_t>(y * m.nx + x)];
      std::uint32_t px = 0x808080u;  // NaN / Inf: neutral grey
      if (std::isfinite(v)) {
        std::array<unsigned char, 3> c;
        if (!m.categories.empty()) {
          c = CategoryColour(m, v);
        } else {
          double t = span > 0 ? (v - lim[0]) / span : 0.5;
          if (m.kind == ColourMapKind::kCyclic) t -= std::floor(t);
          t = std::clamp(t, 0.0, 1.0);
          c = lut.rgb[LutIndex(t)];
        }
        if (!m.faded.empty() && m.faded[static_cast<std::size_t>(y * m.nx + x)])
          for (auto& ch : c) ch = static_cast<unsigned char>(std::lround(0.3 * ch + 0.7 * 255.0));
        px = (static_cast<std::uint32_t>(c[0]) << 16) | (static_cast<std::uint32_t>(c[1]) << 8) | c[2];
      }
      row[x] = px;
    }
  }
  cairo_surface_mark_dirty(img);
  const double mx = ox + PanelGeometry::kLeft, my = oy + PanelGeometry::kTop;
  cairo_save(cr);
  cairo_translate(cr, mx, my);
  cairo_scale(cr, g.map_w / static_cast<double>(m.nx), g.map_h / static_cast<double>(m.ny));
  cairo_set_source_surface(cr, img, 0, 0);
  cairo_pattern_set_filter(cairo_get_source(cr), CAIRO_FILTER_NEAREST);
  cairo_rectangle(cr, 0, 0, static_cast<double>(m.nx), static_cast<double>(m.ny));
  cairo_fill(cr);
  cairo_restore(cr);
  cairo_surface_destroy(img);

  cairo_set_source_rgb(cr, 0, 0, 0);
  cairo_set_line_width(cr, 1.0);
  cairo_rectangle(cr, mx - 0.5, my - 0.5, g.map_w + 1, g.map_h + 1);
  cairo_stroke(cr);

  // Title and unit.
  std::string title = m.title + (m.unit.empty() ? "" : " [" + m.unit + "]");
  Text(cr, mx + g.map_w / 2, oy + 8, title, 14, 0.5, 0.0, true);

  // Axis ticks in world units (arcsec) when the map has them, else in FITS pixel numbers (centre i + 1).
  auto tick = [&](bool horizontal, double f, const std::string& label) {  // f: offset along the axis
    if (horizontal) {
      cairo_move_to(cr, mx + f, my + g.map_h);
      cairo_line_to(cr, mx + f, my + g.map_h + 4);
      cairo_stroke(cr);
      Text(cr, mx + f, my + g.map_h + 6, label, 10, 0.5, 0.0);
    } else {
      cairo_move_to(cr, mx, my + g.map_h - f);
      cairo_line_to(cr, mx - 4, my + g.map_h - f);
      cairo_stroke(cr);
      Text(cr, mx - 6, my + g.map_h - f, label, 10, 1.0, 0.5);
    }
  };
  auto axis = [&](long n, bool horizontal) {
    const double len = horizontal ? g.map_w : g.map_h;
    const std::optional<QuicklookWorldAxis>& world = horizontal ? m.x_world : m.y_world;
    if (world && world->step != 0.0) {
      const double a = world->origin - 0.5 * world->step, b = world->origin + (static_cast<double>(n) - 0.5) * world->step;
      const double lo = std::min(a, b), hi = std::max(a, b);
      const double step = NiceTickStep(hi - lo, 5);
      for (double v = std::ceil(lo / step - 1e-9) * step; v <= hi + 1e-9 * step; v += step)
        tick(horizontal, ((v - world->origin) / world->step + 0.5) / static_cast<double>(n) * len, TickLabel(v, step));
      return;
    }
    const double step = std::max(1.0, NiceTickStep(static_cast<double>(n), 5));
    for (double p = step; p <= static_cast<double>(n) + 1e-9; p += step)
      tick(horizontal, (p - 0.5) / static_cast<double>(n) * len, TickLabel(p, step));
  };
  axis(m.nx, true);
  axis(m.ny, false);
  Text(cr, mx + g.map_w / 2, my + g.map_h + 22, m.x_world ? m.x_world->label : "x [pixel]", 11, 0.5, 0.0);
  cairo_save(cr);
  cairo_translate(cr, ox + 12, my + g.map_h / 2);
  cairo_rotate(cr, -kPi / 2);
  Text(cr, 0, 0, m.y_world ? m.y_world->label : "y [pixel]", 11, 0.5, 0.5);
  cairo_restore(cr);

  const double bx = mx + g.map_w + 14, bw = 16, bh = g.map_h;
  if (!m.categories.empty()) {  // legend: one swatch and name per code
    for (std::size_t k = 0; k < m.categories.size(); ++k) {
      const auto& c = m.categories[k];
      const double yk = my + 16.0 * static_cast<double>(k);
      cairo_set_source_rgb(cr, c.rgb[0] / 255.0, c.rgb[1] / 255.0, c.rgb[2] / 255.0);
      cairo_rectangle(cr, bx, yk + 2, 12, 12);
      cairo_fill(cr);
      cairo_set_source_rgb(cr, 0, 0, 0);
      cairo_rectangle(cr, bx - 0.5, yk + 1.5, 13, 13);
      cairo_stroke(cr);
      Text(cr, bx + 18, yk + 8, c.name, 10, 0.0, 0.5);
    }
    return;
  }
  if (!m.fade_note.empty()) Text(cr, mx + g.map_w, oy + 22, m.fade_note, 9, 1.0, 0.0);

  // Colour bar.
  for (int i = 0; i < static_cast<int>(bh); ++i) {
    const double t = 1.0 - (i + 0.5) / bh;
    const auto& c = lut.rgb[LutIndex(t)];
    cairo_set_source_rgb(cr, c[0] / 255.0, c[1] / 255.0, c[2] / 255.0);
    cairo_rectangle(cr, bx, my + i, bw, 1.0);
    cairo_fill(cr);
  }
  cairo_set_source_rgb(cr, 0, 0, 0);
  cairo_rectangle(cr, bx - 0.5, my - 0.5, bw + 1, bh + 1);
  cairo_stroke(cr);
  if (span > 0) {
    const double step = NiceTickStep(span, 5);
    for (double v = std::ceil(lim[0] / step - 1e-9) * step; v <= lim[1] + step * 1e-9; v += step) {
      const double yv = my + bh - (v - lim[0]) / span * bh;
      cairo_move_to(cr, bx + bw, yv);
      cairo_line_to(cr, bx + bw + 4, yv);
      cairo_stroke(cr);
      Text(cr, bx + bw + 6, yv, TickLabel(v, step), 10, 0.0, 0.5);
    }
  } else {
    Text(cr, bx + bw + 6, my + bh / 2, Num(lim[0]), 10, 0.0, 0.5);
  }
}

void WritePng(cairo_surface_t* s, const std::string& path, bool overwrite) {
  io_detail::TempOutputFile out(path, overwrite);
  cairo_surface_flush(s);
  const cairo_status_t st = cairo_surface_write_to_png(s, out.temp_path().c_str());
  if (st != CAIRO_STATUS_SUCCESS)
    throw FitsError("'" + path + "': cannot write PNG: " + cairo_status_to_string(st));
  out.Commit();
}

void CheckMap(const QuicklookMap& m) {
  if (m.nx <= 0 || m.ny <= 0 || static_cast<std::size_t>(m.nx * m.ny) != m.values.size())
    throw OptionError("quicklook map '" + m.title + "': " + std::to_string(m.values.size()) + " values for " +
                      std::to_string(m.nx) + " x " + std::to_string(m.ny) + " pixels");
  if (m.nx > 32767 || m.ny > 32767) throw OptionError("quicklook map '" + m.title + "' is too large for a PNG");
}

}  // namespace

std::array<unsigned char, 3> ColourAt(ColourMapKind kind, double t) {
  const Lut& lut = GetLut(kind);
  if (!(t >= 0.0)) t = 0.0;
  if (t > 1.0) t = 1.0;
  return lut.rgb[LutIndex(t)];
}

ColourMapKind DefaultColourMap(const std::string& extname) {
  if (extname == map_names::kBlos || extname == map_names::kVlos || extname == map_names::kInclination)
    return ColourMapKind::kDiverging;
  if (extname == map_names::kAzimuth) return ColourMapKind::kCyclic;
  return ColourMapKind::kSequential;
}

double Percentile(const std::vector<double>& values, double p) {
  std::vector<double> v;
  v.reserve(values.size());
  for (double x : values)
    if (std::isfinite(x)) v.push_back(x);
  if (v.empty()) return std::nan("");
  std::sort(v.begin(), v.end());
  const double pos = std::clamp(p, 0.0, 100.0) / 100.0 * static_cast<double>(v.size() - 1);
  const auto i = static_cast<std::size_t>(std::floor(pos));
  const double frac = pos - static_cast<double>(i);
  if (i + 1 >= v.size()) return v.back();
  return v[i] + frac * (v[i + 1] - v[i]);
}

std::string QuicklookOptions::Validate() const {
  if (!(lower_percentile >= 0.0 && lower_percentile < upper_percentile && upper_percentile <= 100.0))
    return "lower_percentile = " + Num(lower_percentile) + ", upper_percentile = " + Num(upper_percentile) +
           ": expected 0 <= lower < upper <= 100";
  if (panel_size_px < 32 || panel_size_px > 8192)
    return "panel_size_px = " + std::to_string(panel_size_px) + ": expected 32..8192";
  if (sheet_panel_size_px < 32 || sheet_panel_size_px > 8192)
    return "sheet_panel_size_px = " + std::to_string(sheet_panel_size_px) + ": expected 32..8192";
  if (sheet_columns < 1 || sheet_columns > 16) return "sheet_columns = " + std::to_string(sheet_columns) + ": expected 1..16";
  return "";
}

namespace {

// Categorical colours: the first ten follow the general-purpose category palette of the matplotlib plotting
// library (tab10; distinct hues of similar weight, none close to white or grey), four more added; at least as
// many as QUALITY bits in use, so no two bits share a colour.
constexpr std::array<std::array<unsigned char, 3>, 14> kCategoryColours = {{{31, 119, 180},
                                                                           {230, 120, 20},
                                                                           {40, 160, 60},
                                                                           {200, 40, 40},
                                                                           {140, 90, 190},
                                                                           {140, 86, 75},
                                                                           {220, 110, 190},
                                                                           {90, 90, 90},
                                                                           {180, 180, 30},
                                                                           {20, 180, 200},
                                                                           {0, 70, 60},
                                                                           {250, 200, 120},
                                                                           {110, 40, 90},
                                                                           {150, 210, 130}}};

const HeaderValue* FindKeyword(const ImageHdu& hdu, const std::string& key) {
  for (const auto& k : hdu.keywords)
    if (k.key == key) return &k;
  return nullptr;
}

std::string KeywordText(const ImageHdu& hdu, const std::string& key, const std::string& fallback) {
  const HeaderValue* k = FindKeyword(hdu, key);
  if (k && std::holds_alternative<std::string>(k->value)) return std::get<std::string>(k->value);
  return fallback;
}

double KeywordNumber(const ImageHdu& hdu, const std::string& key, double fallback) {
  const HeaderValue* k = FindKeyword(hdu, key);
  if (!k) return fallback;
  if (std::holds_alternative<double>(k->value)) return std::get<double>(k->value);
  if (std::holds_alternative<long long>(k->value)) return static_cast<double>(std::get<long long>(k->value));
  return fallback;
}

void SetWorldAxes(const ImageHdu& hdu, QuicklookMap& m) {
  if (hdu.wcs_header.empty()) return;
  try {
    const SpatialWcs wcs(hdu.wcs_header);
    if (!wcs.helioprojective()) return;
    const double cx = 0.5 * static_cast<double>(m.nx - 1), cy = 0.5 * static_cast<double>(m.ny - 1);
    // Linear along the central row / column (exact for the small fields of view of solar maps).
    const auto x0 = wcs.PixelToWorld(0.0, cy), x1 = wcs.PixelToWorld(static_cast<double>(m.nx - 1), cy);
    const auto y0 = wcs.PixelToWorld(cx, 0.0), y1 = wcs.PixelToWorld(cx, static_cast<double>(m.ny - 1));
    auto wrap = [](double deg) { return deg > 180.0 ? deg - 360.0 : deg; };  // helioprojective longitude
    const auto scale = wcs.PixelScaleArcsec(static_cast<double>(m.nx), static_cast<double>(m.ny));
    QuicklookWorldAxis ax, ay;
    ax.origin = wrap(x0[0]) * 3600.0;
    ax.step = m.nx > 1 ? (wrap(x1[0]) - wrap(x0[0])) * 3600.0 / static_cast<double>(m.nx - 1) : scale[0];
    ay.origin = y0[1] * 3600.0;
    ay.step = m.ny > 1 ? (y1[1] - y0[1]) * 3600.0 / static_cast<double>(m.ny - 1) : scale[1];
    char buf[96];
    std::snprintf(buf, sizeof buf, "helioprojective x [arcsec]  (%.3g arcsec/pixel)", scale[0]);
    ax.label = buf;
    std::snprintf(buf, sizeof buf, "helioprojective y [arcsec]  (%.3g arcsec/pixel)", scale[1]);
    ay.label = buf;
    if (std::isfinite(ax.step) && std::isfinite(ay.step) && ax.step != 0.0 && ay.step != 0.0) {
      m.x_world = ax;
      m.y_world = ay;
    }
  } catch (const FitsError&) {
    // A WCS the picture cannot use: keep pixel axes.
  }
}

}  // namespace

QuicklookMap QuicklookFromHdu(const ImageHdu& hdu) {
  if (hdu.naxes.size() != 2) throw OptionError("quicklook: HDU '" + hdu.extname + "' is not a 2-D image");
  QuicklookMap m;
  m.title = hdu.extname;
  m.unit = hdu.bunit;
  m.nx = hdu.naxes[0];
  m.ny = hdu.naxes[1];
  m.values = hdu.values;
  const bool truth = hdu.extname.rfind("TRUE_", 0) == 0;
  const std::string base = truth ? hdu.extname.substr(5) : hdu.extname;  // a truth map looks like its result
  m.kind = DefaultColourMap(base);
  SetWorldAxes(hdu, m);
  if (base == map_names::kAzimuth) {
    double top = KeywordNumber(hdu, "AZRANGE", 0.0);
    if (!(top == 180.0 || top == 360.0)) {  // no keyword: from the data
      top = 180.0;
      for (double v : hdu.values)
        if (std::isfinite(v) && v >= 180.0) top = 360.0;
    }
    m.vmin = 0.0;
    m.vmax = top;
  } else if (hdu.extname == map_names::kMethod) {
    m.categories.push_back({0.0, "0 none", {255, 255, 255}});
    static const char* kFallback[] = {"", "wfa", "cog", "split", "me"};
    for (int code = 1; code <= 9; ++code) {
      const std::string name = KeywordText(hdu, "METH" + std::to_string(code), code <= 4 ? kFallback[code] : "");
      if (!name.empty())
        m.categories.push_back({static_cast<double>(code), std::to_string(code) + " " + name,
                                kCategoryColours[static_cast<std::size_t>(code - 1) % kCategoryColours.size()]});
    }
  } else if (hdu.extname == map_names::kQuality) {
    m.bit_flags = true;
    m.categories.push_back({0.0, "0 OK", {255, 255, 255}});
    for (int b = 0; b < 31; ++b) {
      const auto bit = 1u << b;
      const std::vector<std::string> known = QualityBitNames(bit);
      const std::string name = KeywordText(hdu, "QBIT" + std::to_string(b), known.empty() || known[0] == "UNKNOWN" ? "" : known[0]);
      if (!name.empty())
        m.categories.push_back({static_cast<double>(bit), std::to_string(bit) + " " + name,
                                kCategoryColours[static_cast<std::size_t>(b) % kCategoryColours.size()]});
    }
  } else if (base == map_names::kInclination) {
    m.vmin = 0.0;
    m.vmax = 180.0;
    m.centre = 90.0;
  }
  return m;
}

void FadeWeakAzimuth(QuicklookMap& azimuth, const std::vector<double>& b_trans, const std::vector<double>& b_trans_sigma,
                     double detection_sigma) {
  const std::size_t n = azimuth.values.size();
  if (b_trans.size() != n || b_trans_sigma.size() != n)
    throw OptionError("quicklook: B_TRANS and B_TRANS_SIGMA must have the azimuth map's " + std::to_string(n) + " pixels");
  azimuth.faded.assign(n, 0);
  for (std::size_t i = 0; i < n; ++i)
    azimuth.faded[i] = !(std::isfinite(b_trans[i]) && std::isfinite(b_trans_sigma[i]) &&
                         b_trans[i] >= detection_sigma * b_trans_sigma[i]);
  char buf[80];
  std::snprintf(buf, sizeof buf, "faded: B_TRANS < %g sigma", detection_sigma);
  azimuth.fade_note = buf;
}

void ShareColourLimits(const std::vector<QuicklookMap*>& maps, const QuicklookOptions& options) {
  if (maps.empty()) return;
  QuicklookMap all = *maps.front();
  for (std::size_t k = 1; k < maps.size(); ++k)
    all.values.insert(all.values.end(), maps[k]->values.begin(), maps[k]->values.end());
  const auto lim = ColourLimits(all, options);
  for (QuicklookMap* m : maps) {
    m->vmin = lim[0];
    m->vmax = lim[1];
  }
}

std::array<double, 2> ColourLimits(const QuicklookMap& m, const QuicklookOptions& o) {
  if (m.vmin && m.vmax) return {*m.vmin, *m.vmax};
  double lo = Percentile(m.values, o.lower_percentile);
  double hi = Percentile(m.values, o.upper_percentile);
  if (std::isnan(lo)) return {0.0, 1.0};
  if (m.kind == ColourMapKind::kDiverging) {
    const double half = std::max(std::fabs(lo - m.centre), std::fabs(hi - m.centre));
    lo = m.centre - half;
    hi = m.centre + half;
  }
  if (m.vmin) lo = *m.vmin;
  if (m.vmax) hi = *m.vmax;
  if (!(hi > lo)) {  // constant map: a unit-wide window around the value
    const double pad = std::max(1.0, std::fabs(lo) * 0.01);
    lo -= pad;
    hi += pad;
  }
  return {lo, hi};
}

void WriteMapPng(const std::string& path, const QuicklookMap& map, const QuicklookOptions& options) {
  const std::string problem = options.Validate();
  if (!problem.empty()) throw OptionError("QuicklookOptions: " + problem);
  CheckMap(map);
  const PanelGeometry g = Geometry(map, options.panel_size_px);
  CairoSurface s(static_cast<int>(g.width()), static_cast<int>(g.height()));
  cairo_set_source_rgb(s.cr, 1, 1, 1);
  cairo_paint(s.cr);
  DrawPanel(s.cr, 0, 0, map, g, options);
  WritePng(s.s, path, options.overwrite);
}

void WriteSummaryPng(const std::string& path, const std::vector<QuicklookMap>& maps, const std::string& title,
                     const QuicklookOptions& options) {
  const std::string problem = options.Validate();
  if (!problem.empty()) throw OptionError("QuicklookOptions: " + problem);
  if (maps.empty()) throw OptionError("summary sheet '" + path + "': no maps");
  for (const auto& m : maps) CheckMap(m);
  double cell_w = 0, cell_h = 0;
  std::vector<PanelGeometry> geo;
  for (const auto& m : maps) {
    geo.push_back(Geometry(m, options.sheet_panel_size_px));
    cell_w = std::max(cell_w, geo.back().width());
    cell_h = std::max(cell_h, geo.back().height());
  }
  const int cols = std::min<int>(options.sheet_columns, static_cast<int>(maps.size()));
  const int rows = static_cast<int>((maps.size() + cols - 1) / cols);
  const double header = 30;
  const double w = cols * cell_w, h = header + rows * cell_h;
  if (w > 32767 || h > 32767) throw OptionError("summary sheet '" + path + "' would exceed 32767 pixels");
  CairoSurface s(static_cast<int>(w), static_cast<int>(h));
  cairo_set_source_rgb(s.cr, 1, 1, 1);
  cairo_paint(s.cr);
  cairo_set_source_rgb(s.cr, 0, 0, 0);
  Text(s.cr, w / 2, 8, title, 15, 0.5, 0.0, true);
  for (std::size_t i = 0; i < maps.size(); ++i) {
    const double ox = static_cast<double>(i % cols) * cell_w;
    const double oy = header + static_cast<double>(i / cols) * cell_h;
    DrawPanel(s.cr, ox, oy, maps[i], geo[i], options);
  }
  WritePng(s.s, path, options.overwrite);
}

}  // namespace zeeline
