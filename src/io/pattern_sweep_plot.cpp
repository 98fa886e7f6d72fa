#include "io/pattern_sweep_plot.hpp"

#include <cairo.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <limits>
#include <memory>

#include "core/axis_ticks.hpp"
#include "synth/profile_plot.hpp"
#include "zeeline/core/constants.hpp"

namespace zeeline {
namespace {

void Text(cairo_t* cr, double x, double y, const std::string& s, double align_x, double align_y) {
  cairo_text_extents_t e;
  cairo_text_extents(cr, s.c_str(), &e);
  cairo_move_to(cr, x - align_x * e.width - e.x_bearing, y - align_y * e.height - e.y_bearing);
  cairo_show_text(cr, s.c_str());
}

}  // namespace

void WriteSweepPlotPng(const std::string& path, const SweepPlotOptions& o) {
  double xmin = std::numeric_limits<double>::infinity(), xmax = -xmin, ymin = xmin, ymax = -xmin;
  for (const auto* set : {&o.curves, &o.reference})
    for (const SweepCurve& c : *set) {
      if (c.x.size() != c.y.size() || (!c.strength.empty() && c.strength.size() != c.x.size()))
        throw PlotError("plot " + path + ": a curve has inconsistent lengths");
      for (std::size_t i = 0; i < c.x.size(); ++i) {
        if (!std::isfinite(c.x[i]) || !std::isfinite(c.y[i])) continue;
        xmin = std::min(xmin, c.x[i]);
        xmax = std::max(xmax, c.x[i]);
        ymin = std::min(ymin, c.y[i]);
        ymax = std::max(ymax, c.y[i]);
      }
    }
  if (!(xmax > xmin)) throw PlotError("plot " + path + ": need at least two distinct field values");
  if (!(ymax > ymin)) {
    ymin -= 1.0;
    ymax += 1.0;
  }
  const double pad = 0.05 * (ymax - ymin);
  ymin -= pad;
  ymax += pad;

  std::unique_ptr<cairo_surface_t, decltype(&cairo_surface_destroy)> surface(
      cairo_image_surface_create(CAIRO_FORMAT_RGB24, o.width_px, o.height_px), &cairo_surface_destroy);
  std::unique_ptr<cairo_t, decltype(&cairo_destroy)> context(cairo_create(surface.get()), &cairo_destroy);
  cairo_t* cr = context.get();
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_paint(cr);
  cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
  const double left = 100, right = 30, top = 50, bottom = 70;
  const double w = o.width_px - left - right, h = o.height_px - top - bottom;
  auto X = [&](double x) { return left + (x - xmin) / (xmax - xmin) * w; };
  auto Y = [&](double y) { return top + h - (y - ymin) / (ymax - ymin) * h; };

  cairo_set_source_rgb(cr, 0, 0, 0);
  cairo_set_line_width(cr, 1.0);
  cairo_rectangle(cr, left, top, w, h);
  cairo_stroke(cr);
  cairo_set_font_size(cr, 13.0);
  const double xs = NiceTickStep(xmax - xmin, 8);
  for (double t = std::ceil(xmin / xs) * xs; t <= xmax + 1e-9 * xs; t += xs) {
    cairo_move_to(cr, X(t), top + h);
    cairo_line_to(cr, X(t), top + h - 6);
    cairo_stroke(cr);
    Text(cr, X(t), top + h + 6, TickLabel(t, xs), 0.5, 0.0);
  }
  const double ys = NiceTickStep(ymax - ymin, 8);
  for (double t = std::ceil(ymin / ys) * ys; t <= ymax + 1e-9 * ys; t += ys) {
    cairo_move_to(cr, left, Y(t));
    cairo_line_to(cr, left + 6, Y(t));
    cairo_stroke(cr);
    Text(cr, left - 6, Y(t), TickLabel(t, ys), 1.0, 0.5);
  }
  cairo_set_font_size(cr, 15.0);
  Text(cr, left + 0.5 * w, top + h + 30, o.x_label, 0.5, 0.0);
  cairo_save(cr);
  cairo_translate(cr, left - 70, top + 0.5 * h);
  cairo_rotate(cr, -0.5 * constants::kPi);
  Text(cr, 0, 0, o.y_label, 0.5, 0.5);
  cairo_restore(cr);
  if (!o.title.empty()) Text(cr, left + 0.5 * w, 22, o.title, 0.5, 0.5);

  cairo_save(cr);
  cairo_rectangle(cr, left, top, w, h);
  cairo_clip(cr);
  const double dash = 5.0;
  cairo_set_source_rgb(cr, 0.6, 0.6, 0.6);
  cairo_set_line_width(cr, 1.0);
  cairo_set_dash(cr, &dash, 1, 0.0);
  for (const SweepCurve& c : o.reference) {
    for (std::size_t i = 0; i < c.x.size(); ++i)
      (i == 0 ? cairo_move_to : cairo_line_to)(cr, X(c.x[i]), Y(c.y[i]));
    cairo_stroke(cr);
  }
  cairo_set_dash(cr, nullptr, 0, 0.0);
  for (const SweepCurve& c : o.curves) {
    const double r = c.q > 0 ? 0.8 : (c.q < 0 ? 0.1 : 0.1), g = c.q == 0 ? 0.55 : 0.15, b = c.q < 0 ? 0.8 : 0.1;
    cairo_set_source_rgb(cr, r, g, b);
    for (std::size_t i = 1; i < c.x.size(); ++i) {
      if (!std::isfinite(c.y[i - 1]) || !std::isfinite(c.y[i])) continue;
      const double s = c.strength.empty() ? 0.0 : 0.5 * (c.strength[i - 1] + c.strength[i]);
      cairo_set_line_width(cr, 0.8 + 3.2 * std::clamp(s, 0.0, 1.0));
      cairo_move_to(cr, X(c.x[i - 1]), Y(c.y[i - 1]));
      cairo_line_to(cr, X(c.x[i]), Y(c.y[i]));
      cairo_stroke(cr);
    }
  }
  cairo_restore(cr);
  cairo_set_source_rgb(cr, 0, 0, 0);
  cairo_select_font_face(cr, "monospace", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
  cairo_set_font_size(cr, 12.0);
  double ty = top + 18;
  for (const std::string& line : o.annotation) {
    cairo_move_to(cr, left + 10, ty);
    cairo_show_text(cr, line.c_str());
    ty += 16.0;
  }
  cairo_surface_flush(surface.get());
  const std::string tmp = path + ".part";
  const cairo_status_t status = cairo_surface_write_to_png(surface.get(), tmp.c_str());
  if (status != CAIRO_STATUS_SUCCESS) {
    std::error_code ec;
    std::filesystem::remove(tmp, ec);
    throw PlotError("cannot write PNG " + path + ": " + cairo_status_to_string(status));
  }
  std::error_code ec;
  std::filesystem::rename(tmp, path, ec);
  if (ec) {
    std::filesystem::remove(tmp, ec);
    throw PlotError("cannot write PNG " + path + ": rename failed");
  }
}

}  // namespace zeeline
