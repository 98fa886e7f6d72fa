// mpi/mpi_backend.hpp -- the MPI side of cli/parallel.hpp: starting and stopping MPI, aborting, and the
// distributed map (distributed_maps.hpp). Linked into the zeeline program only (CMake ZEELINE_WITH_MPI).
#pragma once

namespace zeeline::cli {

/// Installs the MPI backend (call at the start of main, before StartParallel).
void InstallMpiBackend();

}  // namespace zeeline::cli
