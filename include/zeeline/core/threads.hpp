// zeeline/core/threads.hpp -- how many worker threads a parallel loop uses.
#pragma once

namespace zeeline {

/// `requested` when positive; otherwise all threads OpenMP offers (omp_get_max_threads, which honours
/// OMP_NUM_THREADS). Always 1 in a build without OpenMP.
int ResolveThreadCount(int requested);

}  // namespace zeeline
