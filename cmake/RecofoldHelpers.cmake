# SPDX-License-Identifier: Apache-2.0
# Helpers shared by the module CMakeLists files.

# Warnings for our own targets (not for third-party headers, which are SYSTEM).
function(recofold_warnings target)
  target_compile_options(${target} PRIVATE -Wall -Wextra)
endfunction()

# recofold_module(NAME core SOURCES a.cc b.cc DEPS recofold::x ... PRIVATE_DEPS ...)
# Defines recofold_<NAME> and its alias recofold::<NAME>.
function(recofold_module)
  cmake_parse_arguments(M "" "NAME" "SOURCES;DEPS;PRIVATE_DEPS" ${ARGN})
  add_library(recofold_${M_NAME} STATIC ${M_SOURCES})
  add_library(recofold::${M_NAME} ALIAS recofold_${M_NAME})
  target_include_directories(recofold_${M_NAME} PUBLIC ${PROJECT_SOURCE_DIR}/include)
  target_link_libraries(recofold_${M_NAME} PUBLIC ${M_DEPS} PRIVATE ${M_PRIVATE_DEPS})
  recofold_warnings(recofold_${M_NAME})
endfunction()

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
    ENVIRONMENT "RECOFOLD_SOURCE_DIR=${PROJECT_SOURCE_DIR};RECOFOLD_BINARY_DIR=${PROJECT_BINARY_DIR}")
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
    ENVIRONMENT "RECOFOLD_EXE=$<TARGET_FILE:recofold>;RECOFOLD_SOURCE_DIR=${PROJECT_SOURCE_DIR};RECOFOLD_BINARY_DIR=${PROJECT_BINARY_DIR};PYTHONDONTWRITEBYTECODE=1")
endfunction()
