#include "io/residual_plot.hpp"

#include <cairo.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <memory>
#include <stdexcept>

#include "core/axis_ticks.hpp"

namespace zeeline {
namespace {

void Text(cairo_t* cr, double x, double y, const std::string& s, double align_x, double align_y) {
  cairo_text_extents_t e;
  cairo_text_extents(cr, s.c_str(), &e);
  cairo_move_to(cr, x - align_x * e.width - e.x_bearing, y - align_y * e.height - e.y_bearing);
  cairo_show_text(cr, s.c_str());
}

// Colour-blind-safe qualitative palette (Okabe & Ito 2008, "Color Universal Design").
const double kPalette[][3] = {{0.0, 0.447, 0.698}, {0.835, 0.369, 0.0}, {0.0, 0.620, 0.451}, {0.800, 0.475, 0.655},
                              {0.902, 0.624, 0.0}, {0.337, 0.706, 0.914}, {0.941, 0.894, 0.259}, {0.0, 0.0, 0.0}};

}  // namespace

void WriteResidualPlotPng(const std::string& path, const Eigen::MatrixXd& r, const ResidualPlotOptions& o) {
  const int text_w = o.annotation.empty() ? 0 : 460;
  const int width = o.width_px + text_w, height = o.height_px;
  std::unique_ptr<cairo_surface_t, decltype(&cairo_surface_destroy)> surface(
      cairo_image_surface_create(CAIRO_FORMAT_RGB24, width, height), cairo_surface_destroy);
  std::unique_ptr<cairo_t, decltype(&cairo_destroy)> cr_owner(cairo_create(surface.get()), cairo_destroy);
  cairo_t* cr = cr_owner.get();
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_paint(cr);
  cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);

  const double x0 = 90, y0 = 50, w = o.width_px - 120.0, h = height - 190.0;
  double lim = 3.5;
  for (Eigen::Index i = 0; i < r.size(); ++i)
    if (std::isfinite(r.data()[i])) lim = std::max(lim, 1.1 * std::fabs(r.data()[i]));
  const double n_rows = std::max<double>(1.0, static_cast<double>(r.rows()));
  auto X = [&](double k) { return x0 + (k + 0.5) / n_rows * w; };
  auto Y = [&](double v) { return y0 + h * 0.5 * (1.0 - v / lim); };

  cairo_set_source_rgb(cr, 0, 0, 0);
  cairo_set_font_size(cr, 16.0);
  Text(cr, x0, 18, o.title, 0.0, 0.0);
  cairo_set_line_width(cr, 1.0);
  cairo_rectangle(cr, x0, y0, w, h);
  cairo_stroke(cr);
  // reference lines 0, +-1, +-3
  const double dash = 4.0;
  for (double v : {0.0, 1.0, -1.0, 3.0, -3.0}) {
    cairo_set_source_rgb(cr, v == 0.0 ? 0.4 : 0.7, v == 0.0 ? 0.4 : 0.7, v == 0.0 ? 0.4 : 0.7);
    cairo_set_dash(cr, &dash, v == 0.0 ? 0 : 1, 0.0);
    cairo_move_to(cr, x0, Y(v));
    cairo_line_to(cr, x0 + w, Y(v));
    cairo_stroke(cr);
  }
  cairo_set_dash(cr, nullptr, 0, 0.0);
  // y ticks
  cairo_set_source_rgb(cr, 0, 0, 0);
  cairo_set_font_size(cr, 13.0);
  const double ys = NiceTickStep(2.0 * lim, 6);
  for (double t = std::ceil(-lim / ys) * ys; t <= lim + 1e-9; t += ys) {
    cairo_move_to(cr, x0, Y(t));
    cairo_line_to(cr, x0 + 6, Y(t));
    cairo_stroke(cr);
    Text(cr, x0 - 6, Y(t), TickLabel(t, ys), 1.0, 0.5);
  }
  cairo_save(cr);
  cairo_translate(cr, x0 - 60, y0 + 0.5 * h);
  cairo_rotate(cr, -0.5 * 3.14159265358979323846);
  cairo_set_font_size(cr, 15.0);
  Text(cr, 0, 0, "(data - model) / sigma", 0.5, 0.5);
  cairo_restore(cr);
  // row labels, rotated
  cairo_set_font_size(cr, 12.0);
  for (Eigen::Index k = 0; k < r.rows(); ++k) {
    if (static_cast<std::size_t>(k) >= o.row_labels.size()) break;
    cairo_save(cr);
    cairo_translate(cr, X(static_cast<double>(k)), y0 + h + 8);
    cairo_rotate(cr, 0.25 * 3.14159265358979323846);
    Text(cr, 0, 0, o.row_labels[static_cast<std::size_t>(k)], 0.0, 0.0);
    cairo_restore(cr);
  }
  // points: series j slightly offset within its column
  const double step = r.cols() > 1 ? 0.5 / static_cast<double>(r.cols() - 1) : 0.0;
  for (Eigen::Index j = 0; j < r.cols(); ++j) {
    const double* c = kPalette[j % 8];
    cairo_set_source_rgb(cr, c[0], c[1], c[2]);
    for (Eigen::Index k = 0; k < r.rows(); ++k) {
      const double v = r(k, j);
      if (!std::isfinite(v)) continue;
      cairo_arc(cr, X(static_cast<double>(k) - 0.25 + step * static_cast<double>(j)), Y(v), 3.5, 0, 6.2832);
      cairo_fill(cr);
    }
    // legend
    const double lx = x0 + 10 + 90.0 * static_cast<double>(j), ly = y0 + 14;
    cairo_arc(cr, lx, ly, 4, 0, 6.2832);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 0, 0, 0);
    if (static_cast<std::size_t>(j) < o.series_labels.size())
      Text(cr, lx + 8, ly, o.series_labels[static_cast<std::size_t>(j)], 0.0, 0.5);
  }
  cairo_set_source_rgb(cr, 0, 0, 0);
  cairo_set_font_size(cr, 12.5);
  for (std::size_t i = 0; i < o.annotation.size(); ++i)
    Text(cr, o.width_px + 10.0, 30.0 + 17.0 * static_cast<double>(i), o.annotation[i], 0.0, 0.0);

  cairo_surface_flush(surface.get());
  const std::string tmp = path + ".tmp-zeeline";
  if (cairo_surface_write_to_png(surface.get(), tmp.c_str()) != CAIRO_STATUS_SUCCESS) {
    std::remove(tmp.c_str());
    throw std::runtime_error(path + ": cannot write the PNG");
  }
  std::error_code ec;
  std::filesystem::rename(tmp, path, ec);
  if (ec) {
    std::remove(tmp.c_str());
    throw std::runtime_error(path + ": cannot write the PNG (" + ec.message() + ")");
  }
}

}  // namespace zeeline
