# The package test (cmake -P, run by CTest): installs the built firnray into a temporary prefix,
# configures and builds tests/package/ against it with find_package(firnray), runs the program
# and checks what it printed. Variables come from the add_test() in the top CMakeLists.txt.
cmake_minimum_required(VERSION 3.21)

function(run_step what)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE result OUTPUT_VARIABLE output ERROR_VARIABLE output)
  if(NOT result EQUAL 0)
    message(FATAL_ERROR "${what} failed (${result}):\n${output}")
  endif()
  set(step_output "${output}" PARENT_SCOPE)
endfunction()

set(prefix ${FIRNRAY_WORK_DIR}/prefix)
set(consumer_build ${FIRNRAY_WORK_DIR}/consumer-build)
file(REMOVE_RECURSE ${FIRNRAY_WORK_DIR})

run_step("installing firnray" ${CMAKE_COMMAND} --install ${FIRNRAY_BUILD_DIR} --prefix ${prefix})
foreach(installed include/firnray/paths/find_paths.hpp bin/firnray)
  if(NOT EXISTS ${prefix}/${installed})
    message(FATAL_ERROR "the install has no ${installed}")
  endif()
endforeach()
file(GLOB_RECURSE leaked ${prefix}/include/firnray/cli/*)
if(leaked)
  message(FATAL_ERROR "the command-line front end's headers were installed: ${leaked}")
endif()

set(configure_args -S ${CONSUMER_SOURCE_DIR} -B ${consumer_build} -G ${CONSUMER_GENERATOR}
    -D CMAKE_PREFIX_PATH=${prefix} -D CMAKE_CXX_COMPILER=${CONSUMER_CXX_COMPILER}
    -D CMAKE_BUILD_TYPE=${CONSUMER_BUILD_TYPE})
if(CONSUMER_COMPILER_LAUNCHER)
  list(APPEND configure_args -D CMAKE_CXX_COMPILER_LAUNCHER=${CONSUMER_COMPILER_LAUNCHER})
endif()
if(CONSUMER_CXX_FLAGS)
  # A sanitizer build's library needs the sanitizer runtime in the program that links it.
  string(REPLACE ";" " " flags "${CONSUMER_CXX_FLAGS}")
  list(APPEND configure_args -D "CMAKE_CXX_FLAGS=${flags}" -D "CMAKE_EXE_LINKER_FLAGS=${flags}")
endif()
run_step("configuring the consumer project" ${CMAKE_COMMAND} ${configure_args})
run_step("building the consumer project" ${CMAKE_COMMAND} --build ${consumer_build})
run_step("running the consumer program" ${consumer_build}/firnray_consumer)
message(STATUS "the consumer printed:\n${step_output}")
if(NOT step_output MATCHES "index at 100 m depth: 1\\.[0-9]+" OR NOT step_output MATCHES "path [a-z]+: [0-9.]+ ns")
  message(FATAL_ERROR "the consumer printed something unexpected:\n${step_output}")
endif()

# The FIRNRAY_VERSION macro stays inside the build: the exported target must not define it.
file(GLOB targets_files ${prefix}/lib*/cmake/firnray/firnrayTargets*.cmake)
foreach(f ${targets_files})
  file(READ ${f} text)
  if(text MATCHES "FIRNRAY_VERSION")
    message(FATAL_ERROR "${f} leaks FIRNRAY_VERSION to users of the package")
  endif()
endforeach()
