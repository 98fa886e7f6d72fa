# ctest: `cmake --install` the build into a fresh prefix, build tests/install/consumer against it with
# find_package(zeeline), run it and check its output against textbook values; then import the installed
# Python module with Debian's python3 (when it was built).
# Variables: BUILD_DIR, SOURCE_DIR, WORK_DIR, PYTHON, WITH_PYTHON.
cmake_minimum_required(VERSION 3.25)
function(run what)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE err)
  if(NOT rc EQUAL 0)
    message(FATAL_ERROR "${what} failed (${rc}):\n${out}\n${err}")
  endif()
  set(out "${out}" PARENT_SCOPE)
endfunction()

file(REMOVE_RECURSE ${WORK_DIR})
set(prefix ${WORK_DIR}/prefix)
run("cmake --install" ${CMAKE_COMMAND} --install ${BUILD_DIR} --prefix ${prefix})
foreach(f bin/zeeline include/zeeline/atomic/lande.hpp include/zeeline/polarimetry/mueller.hpp)
  if(NOT EXISTS ${prefix}/${f})
    message(FATAL_ERROR "not installed: ${prefix}/${f}")
  endif()
endforeach()
run("configure the consumer" ${CMAKE_COMMAND} -S ${SOURCE_DIR}/tests/install/consumer -B ${WORK_DIR}/build
    -DCMAKE_BUILD_TYPE=Release -DCMAKE_PREFIX_PATH=${prefix})
run("build the consumer" ${CMAKE_COMMAND} --build ${WORK_DIR}/build)
run("run the consumer" ${WORK_DIR}/build/consumer)
# 4/3 and 1/2 to 12 decimals (textbook LS Landé formula with g_s = 2; ideal polariser Mueller matrix).
if(NOT out MATCHES "g=1\\.333333333333 m00=0\\.500000000000 m01=0\\.500000000000 m22=0\\.000000000000")
  message(FATAL_ERROR "consumer printed: ${out}")
endif()
message(STATUS "consumer: ${out}")

if(WITH_PYTHON)
  file(GLOB module ${prefix}/lib/python3*/dist-packages/zeeline*.so)
  if(NOT module)
    message(FATAL_ERROR "the Python module was not installed under ${prefix}/lib/python3*/dist-packages")
  endif()
  get_filename_component(site ${module} DIRECTORY)
  if(NOT EXISTS ${site}/zeeline.pyi)
    message(FATAL_ERROR "no type stubs next to ${module}")
  endif()
  run("import the installed module" ${CMAKE_COMMAND} -E env PYTHONPATH=${site} ${PYTHON}
      ${SOURCE_DIR}/tests/install/import_check.py)
  if(NOT out MATCHES "^${site}/zeeline[^\n]*\n1\\.333333333333333")
    message(FATAL_ERROR "installed module: ${out}")
  endif()
endif()
