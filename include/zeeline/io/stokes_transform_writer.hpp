// zeeline/io/stokes_transform_writer.hpp -- a copy of a Stokes cube file with every Stokes vector replaced
// by M S (e.g. a crosstalk correction), in the input's own layout.
//
// The whole input file is copied HDU by HDU with cfitsio (fits_copy_file: headers, WCS, other extensions
// unchanged); in the cube's HDU (CubeInfo::hdu) the data are rewritten slab by slab along the slowest
// non-Stokes axis (fits_read_subset / fits_write_subset), so memory stays at one slab. M acts on
// (I, Q, U, V) in zeeline's V sign (docs/conventions.md); for a file storing the IAU sign (v_sign = -1)
// the file-space matrix is S M S with S = diag(1, 1, 1, v_sign). NaN samples stay NaN (in float HDUs);
// integer HDUs are written back through BSCALE/BZERO with cfitsio's rounding. HISTORY cards are added to
// the cube's HDU; a CHECKSUM/DATASUM present in it is recomputed. Written to a temporary file in the
// destination directory and renamed; an existing output is replaced only with `overwrite`.
// Errors: FitsError naming the file, the HDU and the problem.
#pragma once

#include <string>
#include <vector>

#include <Eigen/Core>

#include "zeeline/io/cube_reader.hpp"

namespace zeeline {

/// `info` describes the input (from CubeReader); it must hold all of I, Q, U, V.
void WriteStokesTransformedCube(const CubeInfo& info, const std::string& output, const Eigen::Matrix4d& matrix,
                                int v_sign, const std::vector<std::string>& history, bool overwrite);

}  // namespace zeeline
