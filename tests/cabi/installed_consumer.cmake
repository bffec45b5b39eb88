# Run by CTest (cabi.installed_consumer): install the build tree to a fresh prefix,
# then build and run a consumer project with find_package(weft), and the same program
# with the flags from pkg-config (weft.pc).
# Inputs: BUILD_DIR, WORK_DIR, CONSUMER_SOURCE, C_COMPILER, GENERATOR, SANITIZE (the
# build's WEFT_SANITIZE: a sanitized libweft needs consumers linked with the runtime).
cmake_minimum_required(VERSION 3.20)

function(run)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE err)
  if(NOT rc EQUAL 0)
    string(REPLACE ";" " " shown "${ARGN}")
    message(FATAL_ERROR "failed (${rc}): ${shown}\n${out}\n${err}")
  endif()
  set(last_output "${out}" PARENT_SCOPE)
endfunction()

set(prefix ${WORK_DIR}/prefix)
file(REMOVE_RECURSE ${WORK_DIR})
file(MAKE_DIRECTORY ${WORK_DIR})

# Only the C interface's install component set matters; installing everything is
# what a user does, so do that.
run(${CMAKE_COMMAND} --install ${BUILD_DIR} --prefix ${prefix})
foreach(f include/weft.h lib/cmake/weft/weftConfig.cmake lib/pkgconfig/weft.pc)
  if(NOT EXISTS ${prefix}/${f})
    file(GLOB_RECURSE found RELATIVE ${prefix} ${prefix}/*)
    message(FATAL_ERROR "install is missing ${f}; it holds: ${found}")
  endif()
endforeach()

set(sanitize_flags "")
if(SANITIZE)
  set(sanitize_flags -fsanitize=${SANITIZE})
endif()

# 1. find_package(weft)
run(${CMAKE_COMMAND} -S ${CONSUMER_SOURCE} -B ${WORK_DIR}/build -G ${GENERATOR}
    -DCMAKE_C_COMPILER=${C_COMPILER} -DCMAKE_PREFIX_PATH=${prefix} -DCMAKE_BUILD_TYPE=Release
    "-DCMAKE_C_FLAGS=${sanitize_flags}" "-DCMAKE_EXE_LINKER_FLAGS=${sanitize_flags}")
run(${CMAKE_COMMAND} --build ${WORK_DIR}/build)
run(${WORK_DIR}/build/weft_consumer)
message(STATUS "find_package consumer: ${last_output}")

# 2. pkg-config
find_program(PKG_CONFIG pkg-config REQUIRED)
set(ENV{PKG_CONFIG_PATH} ${prefix}/lib/pkgconfig)
run(${PKG_CONFIG} --cflags --libs weft)
string(STRIP "${last_output}" flags)
separate_arguments(flags UNIX_COMMAND "${flags}")
run(${C_COMPILER} -std=c99 -Wall -Wextra -pedantic -Werror ${sanitize_flags} ${CONSUMER_SOURCE}/main.c ${flags} -lm
    -Wl,-rpath,${prefix}/lib -o ${WORK_DIR}/pkgconfig_consumer)
run(${WORK_DIR}/pkgconfig_consumer)
message(STATUS "pkg-config consumer: ${last_output}")
run(${PKG_CONFIG} --modversion weft)
message(STATUS "weft.pc version: ${last_output}")
