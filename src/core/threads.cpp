#include "zeeline/core/threads.hpp"

#ifdef _OPENMP
#include <omp.h>
#endif

namespace zeeline {

int ResolveThreadCount(int requested) {
#ifdef _OPENMP
  return requested > 0 ? requested : omp_get_max_threads();
#else
  (void)requested;
  return 1;
#endif
}

}  // namespace zeeline
