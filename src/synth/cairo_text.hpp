// cairo_text.hpp (private) -- text placement shared by the picture writers (synth/profile_plot,
// synth/bar_chart).
#pragma once

#include <cairo.h>

#include <string>

namespace zeeline {

/// Draws `s` with the current font so that the point (x, y) sits at fraction (align_x, align_y) of its ink
/// box: (0, 0) top-left, (0.5, 0.5) centre, (1, 1) bottom-right.
inline void DrawAlignedText(cairo_t* cr, double x, double y, const std::string& s, double align_x, double align_y) {
  cairo_text_extents_t e;
  cairo_text_extents(cr, s.c_str(), &e);
  cairo_move_to(cr, x - align_x * e.width - e.x_bearing, y - align_y * e.height - e.y_bearing);
  cairo_show_text(cr, s.c_str());
}

}  // namespace zeeline
