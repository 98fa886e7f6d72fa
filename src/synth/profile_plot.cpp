#include "synth/profile_plot.hpp"

#include "core/axis_ticks.hpp"
#include "synth/cairo_text.hpp"

#include <cairo.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <memory>
#include <vector>

#include "zeeline/core/constants.hpp"

namespace zeeline {
namespace {

struct Panel {
  double x0, y0, w, h;  // pixel box of the data area
  double xmin, xmax, ymin, ymax;
  double X(double x) const { return x0 + (x - xmin) / (xmax - xmin) * w; }
  double Y(double y) const { return y0 + h - (y - ymin) / (ymax - ymin) * h; }
};

void Text(cairo_t* cr, double x, double y, const std::string& s, double align_x, double align_y) {
  DrawAlignedText(cr, x, y, s, align_x, align_y);
}

void DrawPanel(cairo_t* cr, const Panel& p, const Eigen::ArrayXd& x, const Eigen::ArrayXd& y,
               const std::string& ylabel, bool xlabels, const std::string& xlabel) {
  // frame
  cairo_set_source_rgb(cr, 0, 0, 0);
  cairo_set_line_width(cr, 1.0);
  cairo_rectangle(cr, p.x0, p.y0, p.w, p.h);
  cairo_stroke(cr);
  cairo_set_font_size(cr, 13.0);
  // x ticks
  const double xs = NiceTickStep(p.xmax - p.xmin, 6);
  for (double t = std::ceil(p.xmin / xs) * xs; t <= p.xmax + 1e-9 * xs; t += xs) {
    const double px = p.X(t);
    cairo_move_to(cr, px, p.y0 + p.h);
    cairo_line_to(cr, px, p.y0 + p.h - 6);
    cairo_move_to(cr, px, p.y0);
    cairo_line_to(cr, px, p.y0 + 6);
    cairo_stroke(cr);
    if (xlabels) Text(cr, px, p.y0 + p.h + 6, TickLabel(t, xs), 0.5, 0.0);
  }
  // y ticks
  const double ys = NiceTickStep(p.ymax - p.ymin, 4);
  for (double t = std::ceil(p.ymin / ys) * ys; t <= p.ymax + 1e-9 * ys; t += ys) {
    const double py = p.Y(t);
    cairo_move_to(cr, p.x0, py);
    cairo_line_to(cr, p.x0 + 6, py);
    cairo_move_to(cr, p.x0 + p.w, py);
    cairo_line_to(cr, p.x0 + p.w - 6, py);
    cairo_stroke(cr);
    Text(cr, p.x0 - 6, py, TickLabel(t, ys), 1.0, 0.5);
  }
  // zero line
  if (p.ymin < 0.0 && p.ymax > 0.0) {
    cairo_set_source_rgb(cr, 0.6, 0.6, 0.6);
    const double dash = 4.0;
    cairo_set_dash(cr, &dash, 1, 0.0);
    cairo_move_to(cr, p.x0, p.Y(0.0));
    cairo_line_to(cr, p.x0 + p.w, p.Y(0.0));
    cairo_stroke(cr);
    cairo_set_dash(cr, nullptr, 0, 0.0);
  }
  // axis labels
  cairo_set_source_rgb(cr, 0, 0, 0);
  cairo_set_font_size(cr, 15.0);
  cairo_save(cr);
  cairo_translate(cr, p.x0 - 70, p.y0 + 0.5 * p.h);
  cairo_rotate(cr, -0.5 * constants::kPi);
  Text(cr, 0, 0, ylabel, 0.5, 0.5);
  cairo_restore(cr);
  if (xlabels) Text(cr, p.x0 + 0.5 * p.w, p.y0 + p.h + 30, xlabel, 0.5, 0.0);
  // data
  cairo_save(cr);
  cairo_rectangle(cr, p.x0, p.y0, p.w, p.h);
  cairo_clip(cr);
  cairo_set_source_rgb(cr, 0.05, 0.25, 0.65);
  cairo_set_line_width(cr, 1.6);
  for (Eigen::Index i = 0; i < x.size(); ++i) {
    if (i == 0)
      cairo_move_to(cr, p.X(x[i]), p.Y(y[i]));
    else
      cairo_line_to(cr, p.X(x[i]), p.Y(y[i]));
  }
  cairo_stroke(cr);
  cairo_restore(cr);
}

constexpr int kTextColumnPx = 400;       // width of the annotation column right of the panels
constexpr double kTextMarginPx = 12.0;   // left offset 5 px + right margin

void SetAnnotationFont(cairo_t* cr) {
  cairo_select_font_face(cr, "monospace", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
  cairo_set_font_size(cr, 12.0);
}

// Wraps text lines to `max_px` with the current font, breaking only at spaces; a token wider than the
// column by itself (a long file path) is broken after a '/', '_' or ',' when it has one, and only as a
// last resort inside it. Continuation lines keep the line's indentation plus two spaces.
std::vector<std::string> WrapToWidth(cairo_t* cr, const std::vector<std::string>& lines, double max_px) {
  auto width = [cr](const std::string& t) {
    cairo_text_extents_t e;
    cairo_text_extents(cr, t.c_str(), &e);
    return e.x_advance;
  };
  std::vector<std::string> out;
  for (const std::string& line : lines) {
    if (width(line) <= max_px) {
      out.push_back(line);
      continue;
    }
    const std::string indent(line.find_first_not_of(' ') == std::string::npos ? 0 : line.find_first_not_of(' '), ' ');
    std::string current = indent, rest = line.substr(indent.size());
    const std::string next_indent = indent + "  ";
    while (!rest.empty()) {
      const std::size_t sp = rest.find(' ');
      std::string word = rest.substr(0, sp);
      rest = sp == std::string::npos ? "" : rest.substr(sp + 1);
      const bool fresh = current.find_first_not_of(' ') == std::string::npos;
      const std::string candidate = fresh ? current + word : current + " " + word;
      if (width(candidate) <= max_px) {
        current = candidate;
        continue;
      }
      if (!fresh) {
        out.push_back(current);
        current = next_indent;
      }
      // The word alone on a line: split an over-long token at a separator, else by characters.
      while (width(current + word) > max_px && word.size() > 1) {
        std::size_t cut = 0;
        for (std::size_t k = 1; k < word.size(); ++k)
          if (width(current + word.substr(0, k)) > max_px) break;
          else if (word[k - 1] == '/' || word[k - 1] == '_' || word[k - 1] == ',') cut = k;
        if (cut == 0)
          for (cut = word.size() - 1; cut > 1 && width(current + word.substr(0, cut)) > max_px; --cut) {
          }
        out.push_back(current + word.substr(0, cut));
        word = word.substr(cut);
        current = next_indent;
      }
      current += word;
    }
    if (current.find_first_not_of(' ') != std::string::npos) out.push_back(current);
  }
  return out;
}

}  // namespace

std::vector<std::string> WrapAnnotation(const std::vector<std::string>& lines) {
  std::unique_ptr<cairo_surface_t, decltype(&cairo_surface_destroy)> surface(
      cairo_image_surface_create(CAIRO_FORMAT_RGB24, 8, 8), &cairo_surface_destroy);
  std::unique_ptr<cairo_t, decltype(&cairo_destroy)> context(cairo_create(surface.get()), &cairo_destroy);
  SetAnnotationFont(context.get());
  return WrapToWidth(context.get(), lines, kTextColumnPx - kTextMarginPx);
}

double AnnotationTextWidthPx(const std::string& line) {
  std::unique_ptr<cairo_surface_t, decltype(&cairo_surface_destroy)> surface(
      cairo_image_surface_create(CAIRO_FORMAT_RGB24, 8, 8), &cairo_surface_destroy);
  std::unique_ptr<cairo_t, decltype(&cairo_destroy)> context(cairo_create(surface.get()), &cairo_destroy);
  SetAnnotationFont(context.get());
  cairo_text_extents_t e;
  cairo_text_extents(context.get(), line.c_str(), &e);
  return e.x_advance;
}

double AnnotationColumnWidthPx() { return kTextColumnPx - kTextMarginPx; }

void WriteStokesPlotPng(const std::string& path, const Eigen::ArrayXd& wavelength_nm, const StokesArray& stokes,
                        const StokesPlotOptions& o) {
  if (wavelength_nm.size() < 2 || stokes.rows() != wavelength_nm.size())
    throw PlotError("plot " + path + ": need at least two wavelengths and one Stokes row per wavelength");
  if (!(o.continuum != 0.0) || !std::isfinite(o.continuum))
    throw PlotError("plot " + path + ": continuum must be finite and non-zero");
  for (const PlotCurve& curve : o.overlays)
    if (curve.panel < 0 || curve.panel > 3 || curve.y.size() != wavelength_nm.size())
      throw PlotError("plot " + path + ": an overlay curve has a bad panel index or length");
  const int text_column = o.annotation.empty() ? 0 : kTextColumnPx;
  const int image_width = o.width_px + text_column;
  std::unique_ptr<cairo_surface_t, decltype(&cairo_surface_destroy)> surface(
      cairo_image_surface_create(CAIRO_FORMAT_RGB24, image_width, o.height_px), &cairo_surface_destroy);
  std::unique_ptr<cairo_t, decltype(&cairo_destroy)> context(cairo_create(surface.get()), &cairo_destroy);
  cairo_t* cr = context.get();
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_paint(cr);
  cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);

  const double span = wavelength_nm[wavelength_nm.size() - 1] - wavelength_nm[0];
  const bool in_pm = span < 1.0;
  const Eigen::ArrayXd x = (wavelength_nm - o.centre_nm) * (in_pm ? 1e3 : 1.0);
  char xlabel[160];
  std::snprintf(xlabel, sizeof xlabel, "wavelength - %.4f nm  [%s]", o.centre_nm, in_pm ? "pm" : "nm");

  const double left = 100, right = 30, top = o.title.empty() ? 30 : 60, bottom = 70, gap = 18;
  const double ph = (o.height_px - top - bottom - 3 * gap) / 4.0;
  const double pw = o.width_px - left - right;
  const char* labels_norm[4] = {"I / Ic", "Q / Ic", "U / Ic", "V / Ic"};
  const char* labels_raw[4] = {"I", "Q", "U", "V"};
  const double norm = o.divide_by_continuum ? o.continuum : 1.0;
  for (int c = 0; c < 4; ++c) {
    Eigen::ArrayXd y = stokes.col(c);
    y /= norm;  // every panel, I too, in units of Ic when normalised (labels "X / Ic")
    double lo = y.minCoeff(), hi = y.maxCoeff();
    for (const PlotCurve& curve : o.overlays) {
      if (curve.panel != c) continue;
      const Eigen::ArrayXd cy = curve.y / norm;
      lo = std::min(lo, cy.minCoeff());
      hi = std::max(hi, cy.maxCoeff());
    }
    if (c > 0) {  // polarisation panels symmetric about zero
      const double m = std::max(std::fabs(lo), std::fabs(hi));
      lo = -m;
      hi = m;
    }
    double pad = 0.08 * (hi - lo);
    if (!(pad > 0.0)) pad = std::max(1e-3, 0.05 * std::fabs(hi));
    Panel p{left, top + c * (ph + gap), pw, ph, x[0], x[x.size() - 1], lo - pad, hi + pad};
    DrawPanel(cr, p, x, y, (o.divide_by_continuum ? labels_norm : labels_raw)[c], c == 3, xlabel);
    cairo_save(cr);
    cairo_rectangle(cr, p.x0, p.y0, p.w, p.h);
    cairo_clip(cr);
    for (const PlotCurve& curve : o.overlays) {
      if (curve.panel != c) continue;
      cairo_set_source_rgb(cr, curve.r, curve.g, curve.b);
      cairo_set_line_width(cr, 1.3);
      const double dash = 5.0;
      cairo_set_dash(cr, &dash, curve.dashed ? 1 : 0, 0.0);
      for (Eigen::Index i = 0; i < x.size(); ++i) {
        const double v = curve.y[i] / norm;
        if (i == 0)
          cairo_move_to(cr, p.X(x[i]), p.Y(v));
        else
          cairo_line_to(cr, p.X(x[i]), p.Y(v));
      }
      cairo_stroke(cr);
      cairo_set_dash(cr, nullptr, 0, 0.0);
    }
    if (c == 0) {
      cairo_set_source_rgb(cr, 0.8, 0.1, 0.1);
      cairo_set_line_width(cr, 1.5);
      for (double m : o.markers_nm) {
        const double px = p.X((m - o.centre_nm) * (in_pm ? 1e3 : 1.0));
        cairo_move_to(cr, px, p.y0);
        cairo_line_to(cr, px, p.y0 + 14);
      }
      cairo_stroke(cr);
    }
    cairo_restore(cr);
  }
  if (!o.title.empty()) {
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_font_size(cr, 16.0);
    Text(cr, left + 0.5 * pw, 22, o.title, 0.5, 0.5);
  }
  if (!o.annotation.empty()) {
    cairo_set_source_rgb(cr, 0, 0, 0);
    SetAnnotationFont(cr);
    double ty = top;
    for (const std::string& line : WrapToWidth(cr, o.annotation, kTextColumnPx - kTextMarginPx)) {
      cairo_move_to(cr, o.width_px + 5.0, ty);
      cairo_show_text(cr, line.c_str());
      ty += 17.0;
    }
  }
  cairo_surface_flush(surface.get());
  const cairo_status_t status = cairo_surface_write_to_png(surface.get(), path.c_str());
  if (status != CAIRO_STATUS_SUCCESS)
    throw PlotError("cannot write PNG " + path + ": " + cairo_status_to_string(status));
}

}  // namespace zeeline
