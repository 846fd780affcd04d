# SPDX-License-Identifier: Apache-2.0
# Fuzz build only (RECOFOLD_FUZZ, clang-14): clang-14 cannot compile Debian's
# ITK 5.2 headers, so the translation units of a module that include ITK or
# GDCM headers are compiled by g++ instead (same libstdc++, same ABI) and
# linked into the clang-built module as object files. They are not
# instrumented (no sanitizer, no fuzzer coverage), like the ITK libraries they
# call; every other file of the module, and recofold's checks around the ITK
# calls, are. DEVELOPERS.md ("Sanitizers and fuzzing") says why.

# recofold_split_gcc_sources(<list var>): removes the files that include ITK
# or GDCM headers from the list and stores them in RECOFOLD_GCC_SOURCES of the
# caller. Without RECOFOLD_FUZZ it does nothing.
macro(recofold_split_gcc_sources _var)
  set(RECOFOLD_GCC_SOURCES "")
  if(RECOFOLD_FUZZ)
    foreach(_f IN LISTS ${_var})
      file(STRINGS ${_f} _itk REGEX "^#include <(itk|gdcm)[A-Za-z0-9_]*\\.h>")
      if(_itk)
        list(APPEND RECOFOLD_GCC_SOURCES ${_f})
      endif()
    endforeach()
    if(RECOFOLD_GCC_SOURCES)
      list(REMOVE_ITEM ${_var} ${RECOFOLD_GCC_SOURCES})
    endif()
  endif()
endmacro()

# recofold_add_gcc_objects(TARGET <target> SOURCES <files>): compiles each
# file with g++ (C++17, -O2, position independent) using the target's own
# include folders and compile definitions, and adds the objects to the target.
function(recofold_add_gcc_objects)
  cmake_parse_arguments(G "" "TARGET" "SOURCES" ${ARGN})
  if(NOT G_SOURCES)
    return()
  endif()
  find_program(RECOFOLD_GCC_CXX NAMES g++-12 g++ REQUIRED)
  set(_launcher "")
  if(CMAKE_CXX_COMPILER_LAUNCHER)
    set(_launcher ${CMAKE_CXX_COMPILER_LAUNCHER})
  endif()
  set(_inc "$<REMOVE_DUPLICATES:$<TARGET_PROPERTY:${G_TARGET},INCLUDE_DIRECTORIES>>")
  set(_def "$<REMOVE_DUPLICATES:$<TARGET_PROPERTY:${G_TARGET},COMPILE_DEFINITIONS>>")
  set(_objs "")
  foreach(_src IN LISTS G_SOURCES)
    get_filename_component(_n ${_src} NAME_WE)
    set(_obj ${CMAKE_CURRENT_BINARY_DIR}/gcc_objects/${_n}.o)
    add_custom_command(
      OUTPUT ${_obj}
      COMMAND ${CMAKE_COMMAND} -E make_directory ${CMAKE_CURRENT_BINARY_DIR}/gcc_objects
      COMMAND ${_launcher} ${RECOFOLD_GCC_CXX} -std=c++17 -O2 -DNDEBUG -fPIC -g1
              -fno-omit-frame-pointer "$<$<BOOL:${_def}>:-D$<JOIN:${_def},;-D>>"
              "$<$<BOOL:${_inc}>:-I$<JOIN:${_inc},;-I>>"
              -MD -MF ${_obj}.d -c ${_src} -o ${_obj}
      DEPFILE ${_obj}.d
      DEPENDS ${_src}
      COMMENT "Building CXX object ${_n}.o with g++ (ITK headers; fuzz build)"
      COMMAND_EXPAND_LISTS VERBATIM)
    list(APPEND _objs ${_obj})
  endforeach()
  set_source_files_properties(${_objs} PROPERTIES EXTERNAL_OBJECT TRUE GENERATED TRUE)
  target_sources(${G_TARGET} PRIVATE ${_objs})
endfunction()
