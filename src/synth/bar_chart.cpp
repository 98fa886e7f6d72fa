#include "synth/bar_chart.hpp"

#include <cairo.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <memory>

#include "core/axis_ticks.hpp"
#include "synth/cairo_text.hpp"
#include "synth/profile_plot.hpp"

namespace zeeline {

void WriteBarChartPng(const std::string& path, const std::vector<Bar>& bars, const BarChartOptions& o) {
  if (bars.empty()) throw PlotError("bar chart " + path + ": nothing to draw");
  double vmin = INFINITY, vmax = 0.0;
  for (const Bar& b : bars)
    if (b.value > 0.0 && std::isfinite(b.value)) {
      vmin = std::min(vmin, b.value);
      vmax = std::max(vmax, b.value);
    }
  if (!(vmax > 0.0)) throw PlotError("bar chart " + path + ": no positive value to draw");
  const double dmin = std::floor(std::log10(vmin)) - (vmin == vmax ? 1.0 : 0.0);
  const double dmax = std::ceil(std::log10(vmax) + 0.15);  // room for the value text

  const double left = 150, right = 40, top = o.title.empty() ? 30 : 60, row = 42, legend = 40;
  const double plot_h = row * static_cast<double>(bars.size());
  const double height = top + plot_h + 60 + legend + 18.0 * static_cast<double>(o.footer.size()) + 20;
  const double pw = o.width_px - left - right;
  std::unique_ptr<cairo_surface_t, decltype(&cairo_surface_destroy)> surface(
      cairo_image_surface_create(CAIRO_FORMAT_RGB24, o.width_px, static_cast<int>(height)), &cairo_surface_destroy);
  std::unique_ptr<cairo_t, decltype(&cairo_destroy)> context(cairo_create(surface.get()), &cairo_destroy);
  cairo_t* cr = context.get();
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_paint(cr);
  cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
  auto X = [&](double v) { return left + (std::log10(v) - dmin) / (dmax - dmin) * pw; };
  const double colours[][3] = {{0.85, 0.37, 0.0}, {0.0, 0.45, 0.70}, {0.80, 0.47, 0.65}, {0.35, 0.35, 0.35}};

  // decade grid and labels
  cairo_set_font_size(cr, 13.0);
  cairo_set_line_width(cr, 1.0);
  for (double d = dmin; d <= dmax + 1e-9; d += 1.0) {
    const double px = X(std::pow(10.0, d));
    cairo_set_source_rgb(cr, 0.85, 0.85, 0.85);
    cairo_move_to(cr, px, top);
    cairo_line_to(cr, px, top + plot_h);
    cairo_stroke(cr);
    cairo_set_source_rgb(cr, 0, 0, 0);
    const double v = std::pow(10.0, d);
    DrawAlignedText(cr, px, top + plot_h + 6, TickLabel(v, v), 0.5, 0.0);
  }
  cairo_set_source_rgb(cr, 0, 0, 0);
  cairo_rectangle(cr, left, top, pw, plot_h);
  cairo_stroke(cr);
  cairo_set_font_size(cr, 15.0);
  DrawAlignedText(cr, left + 0.5 * pw, top + plot_h + 30, o.axis_label, 0.5, 0.0);

  // bars
  for (std::size_t i = 0; i < bars.size(); ++i) {
    const Bar& b = bars[i];
    const double y0 = top + row * static_cast<double>(i) + 8, h = row - 16;
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_font_size(cr, 14.0);
    DrawAlignedText(cr, left - 8, y0 + 0.5 * h, b.label, 1.0, 0.5);
    char text[64];
    std::snprintf(text, sizeof text, "%.3g", b.value);
    if (!(b.value > 0.0) || !std::isfinite(b.value)) {
      DrawAlignedText(cr, left + 6, y0 + 0.5 * h, text, 0.0, 0.5);
      continue;
    }
    const double* c = colours[static_cast<std::size_t>(std::clamp(b.category, 0, 3))];
    cairo_set_source_rgb(cr, c[0], c[1], c[2]);
    const double x1 = std::max(left + 1.0, X(b.value));
    cairo_rectangle(cr, left, y0, x1 - left, h);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_line_width(cr, b.highlight ? 3.0 : 0.8);
    cairo_stroke(cr);
    cairo_set_font_size(cr, 12.0);
    DrawAlignedText(cr, x1 + 5, y0 + 0.5 * h, text, 0.0, 0.5);
  }

  // legend and footer
  double lx = left, ly = top + plot_h + 62;
  cairo_set_font_size(cr, 13.0);
  for (std::size_t k = 0; k < o.categories.size() && k < 4; ++k) {
    cairo_set_source_rgb(cr, colours[k][0], colours[k][1], colours[k][2]);
    cairo_rectangle(cr, lx, ly, 16, 12);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 0, 0, 0);
    DrawAlignedText(cr, lx + 22, ly + 6, o.categories[k], 0.0, 0.5);
    cairo_text_extents_t e;
    cairo_text_extents(cr, o.categories[k].c_str(), &e);
    lx += 22 + e.x_advance + 30;
  }
  cairo_set_font_size(cr, 12.0);
  double fy = ly + legend;
  for (const std::string& line : o.footer) {
    DrawAlignedText(cr, 20, fy, line, 0.0, 0.0);
    fy += 18.0;
  }
  if (!o.title.empty()) {
    cairo_set_font_size(cr, 16.0);
    DrawAlignedText(cr, 0.5 * o.width_px, 22, o.title, 0.5, 0.5);
  }
  cairo_surface_flush(surface.get());
  const cairo_status_t status = cairo_surface_write_to_png(surface.get(), path.c_str());
  if (status != CAIRO_STATUS_SUCCESS)
    throw PlotError("cannot write PNG " + path + ": " + cairo_status_to_string(status));
}

}  // namespace zeeline
