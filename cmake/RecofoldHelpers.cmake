# SPDX-License-Identifier: Apache-2.0
# Helpers shared by the module CMakeLists files.
include(RecofoldGccObjects)

# Warnings for our own targets (not for third-party headers, which are SYSTEM).
function(recofold_warnings target)
  target_compile_options(${target} PRIVATE -Wall -Wextra)
  # Floating point without errno and without trap semantics (recofold never
  # reads errno or enables FP traps; IEEE results are unchanged): lets loops
  # with sqrt, min/max and selects vectorise. No contraction into FMA, so the
  # AVX2/AVX-512 versions of hot loops (core/simd.h) round exactly like the
  # baseline ones and results do not depend on the machine.
  target_compile_options(${target} PRIVATE -fno-math-errno -fno-trapping-math -ffp-contract=off)
endfunction()

# recofold_module(NAME core SOURCES a.cc b.cc DEPS recofold::x ... PRIVATE_DEPS ...)
# Defines recofold_<NAME> and its alias recofold::<NAME>: a shared library in
# <build>/lib. Shared, so that the learn module (libtorch), which the program
# loads at run time only when a learned model is used, runs on the same single
# copy of every other module (one FFT planner lock, one backend registry).
function(recofold_module)
  cmake_parse_arguments(M "" "NAME" "SOURCES;DEPS;PRIVATE_DEPS" ${ARGN})
  add_library(recofold_${M_NAME} SHARED ${M_SOURCES})
  set_target_properties(recofold_${M_NAME} PROPERTIES LIBRARY_OUTPUT_DIRECTORY ${PROJECT_BINARY_DIR}/lib)
  add_library(recofold::${M_NAME} ALIAS recofold_${M_NAME})
  target_include_directories(recofold_${M_NAME} PUBLIC ${PROJECT_SOURCE_DIR}/include)
  target_link_libraries(recofold_${M_NAME} PUBLIC ${M_DEPS} PRIVATE ${M_PRIVATE_DEPS})
  recofold_warnings(recofold_${M_NAME})
endfunction()

# Tests run two at a time beside other work (ctest -j2, shared machines):
# idle OpenMP threads then sleep instead of spinning, which keeps a loaded
# machine from starving the threads that have work (several times faster
# under load; results do not depend on it).
set(RECOFOLD_TEST_OMP_ENV "OMP_WAIT_POLICY=PASSIVE")

# recofold_unit_test(NAME phantom_test SOURCES ../../tests/unit/phantom_test.cc LIBS recofold::phantom)
# A GoogleTest binary registered with ctest (one ctest entry per binary, labelled "unit").
function(recofold_unit_test)
  if(NOT RECOFOLD_BUILD_TESTS)
    return()
  endif()
  cmake_parse_arguments(T "" "NAME;TIMEOUT" "SOURCES;LIBS" ${ARGN})
  add_executable(${T_NAME} ${T_SOURCES})
  set_target_properties(${T_NAME} PROPERTIES RUNTIME_OUTPUT_DIRECTORY ${PROJECT_BINARY_DIR}/tests)
  target_link_libraries(${T_NAME} PRIVATE ${T_LIBS} GTest::gtest GTest::gtest_main)
  target_include_directories(${T_NAME} PRIVATE ${PROJECT_SOURCE_DIR}/tests)
  recofold_warnings(${T_NAME})
  add_test(NAME ${T_NAME} COMMAND ${T_NAME} --gtest_brief=1)
  if(NOT T_TIMEOUT)
    set(T_TIMEOUT 600)
  endif()
  set_tests_properties(${T_NAME} PROPERTIES LABELS unit TIMEOUT ${T_TIMEOUT}
    ENVIRONMENT "RECOFOLD_SOURCE_DIR=${PROJECT_SOURCE_DIR};RECOFOLD_BINARY_DIR=${PROJECT_BINARY_DIR};${RECOFOLD_TEST_OMP_ENV}")
endfunction()

# recofold_python_test(NAME ref_metrics SCRIPT tests/reference/metrics_ref.py [LABEL reference] [ARGS ...])
# Runs a Python script with Debian's /usr/bin/python3; it gets the recofold
# executable and the source/binary folders through the environment.
function(recofold_python_test)
  if(NOT RECOFOLD_BUILD_TESTS)
    return()
  endif()
  cmake_parse_arguments(T "" "NAME;SCRIPT;LABEL;TIMEOUT" "ARGS;DEPENDS" ${ARGN})
  if(NOT T_LABEL)
    set(T_LABEL reference)
  endif()
  if(NOT T_TIMEOUT)
    set(T_TIMEOUT 600)
  endif()
  add_test(NAME ${T_NAME}
           COMMAND /usr/bin/python3 ${PROJECT_SOURCE_DIR}/${T_SCRIPT} ${T_ARGS}
           WORKING_DIRECTORY ${PROJECT_BINARY_DIR})
  set_tests_properties(${T_NAME} PROPERTIES LABELS ${T_LABEL} TIMEOUT ${T_TIMEOUT}
    ENVIRONMENT "RECOFOLD_EXE=${PROJECT_BINARY_DIR}/recofold;RECOFOLD_SOURCE_DIR=${PROJECT_SOURCE_DIR};RECOFOLD_BINARY_DIR=${PROJECT_BINARY_DIR};PYTHONDONTWRITEBYTECODE=1;${RECOFOLD_TEST_OMP_ENV}")
endfunction()

# recofold_glob_module(NAME ops DEPS ... PRIVATE_DEPS ... TEST_LIBS ...)
# A module whose sources are every src/<NAME>/*.cc, plus its tests found by name:
#   tests/unit/<NAME>_*test.cc   one GoogleTest binary each (links the module + TEST_LIBS)
#   tests/tools/<NAME>_*.cc      helper programs for reference tests (module + io)
#   tests/reference/<NAME>_*.py  Python checks against outside sources (label "reference")
# Several people can add files to one module without touching this file.
function(recofold_glob_module)
  cmake_parse_arguments(M "" "NAME" "DEPS;PRIVATE_DEPS;TEST_LIBS" ${ARGN})
  file(GLOB _src CONFIGURE_DEPENDS ${PROJECT_SOURCE_DIR}/src/${M_NAME}/*.cc)
  if(NOT _src)
    message(STATUS "recofold: module ${M_NAME} has no sources yet; skipped")
    return()
  endif()
  set(_test_libs "")
  foreach(l IN LISTS M_TEST_LIBS)
    string(REPLACE "recofold::" "recofold_" _t ${l})
    if(TARGET ${_t})
      list(APPEND _test_libs ${l})
    endif()
  endforeach()
  set(M_TEST_LIBS ${_test_libs})
  # Fuzz build: files including ITK headers are compiled by g++ (RecofoldGccObjects.cmake).
  recofold_split_gcc_sources(_src)
  recofold_module(NAME ${M_NAME} SOURCES ${_src} DEPS ${M_DEPS} PRIVATE_DEPS ${M_PRIVATE_DEPS})
  recofold_add_gcc_objects(TARGET recofold_${M_NAME} SOURCES ${RECOFOLD_GCC_SOURCES})
  if(NOT RECOFOLD_BUILD_TESTS)
    return()
  endif()
  file(GLOB _tests CONFIGURE_DEPENDS ${PROJECT_SOURCE_DIR}/tests/unit/${M_NAME}_*test.cc)
  foreach(t IN LISTS _tests)
    get_filename_component(_n ${t} NAME_WE)
    # A module's tests and tools may use its private libraries directly (FFTW in ops tests, ...).
    recofold_unit_test(NAME ${_n} SOURCES ${t} LIBS recofold::${M_NAME} ${M_TEST_LIBS} ${M_PRIVATE_DEPS})
  endforeach()
  file(GLOB _tools CONFIGURE_DEPENDS ${PROJECT_SOURCE_DIR}/tests/tools/${M_NAME}_*.cc)
  foreach(t IN LISTS _tools)
    get_filename_component(_n ${t} NAME_WE)
    add_executable(${_n} ${t})
    set_target_properties(${_n} PROPERTIES RUNTIME_OUTPUT_DIRECTORY ${PROJECT_BINARY_DIR}/tests)
    target_link_libraries(${_n} PRIVATE recofold::${M_NAME} ${M_TEST_LIBS} ${M_PRIVATE_DEPS})
    recofold_warnings(${_n})
  endforeach()
  file(GLOB _refs CONFIGURE_DEPENDS ${PROJECT_SOURCE_DIR}/tests/reference/${M_NAME}_*.py)
  foreach(t IN LISTS _refs)
    get_filename_component(_n ${t} NAME_WE)
    file(RELATIVE_PATH _rel ${PROJECT_SOURCE_DIR} ${t})
    recofold_python_test(NAME ref_${_n} SCRIPT ${_rel} LABEL reference)
  endforeach()
endfunction()
