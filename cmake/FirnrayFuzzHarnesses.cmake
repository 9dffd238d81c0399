# The fuzz harnesses of fuzz/: one per fuzz/fuzz_NAME.cpp, each defining fuzz_one() (see
# fuzz/fuzz_harness.hpp). Two ways to build them:
#  - firnray_add_fuzzers(): libFuzzer programs fuzz_NAME (FIRNRAY_BUILD_FUZZ, Clang only), the
#    seed corpus (target fuzz_seed_corpus) and the short run (target fuzz_short_run);
#  - firnray_add_fuzz_replay_tests(): replay_fuzz_NAME, which runs the saved crash inputs of
#    tests/fuzz_regressions/fuzz_NAME/ and the hand-made seeds of fuzz/seeds/fuzz_NAME/ through the
#    same function, as a CTest test, with any compiler.
include_guard(GLOBAL)

set(FIRNRAY_FUZZ_DIR ${PROJECT_SOURCE_DIR}/fuzz)
set(FIRNRAY_FUZZ_REGRESSIONS_DIR ${PROJECT_SOURCE_DIR}/tests/fuzz_regressions)
file(GLOB FIRNRAY_FUZZ_HARNESS_SOURCES CONFIGURE_DEPENDS ${FIRNRAY_FUZZ_DIR}/fuzz_*.cpp)
list(FILTER FIRNRAY_FUZZ_HARNESS_SOURCES EXCLUDE REGEX "/fuzz_(support|tables)\\.cpp$")

# The helpers every harness shares, as a small static library.
function(firnray_add_fuzz_support)
  if(TARGET firnray_fuzz_support)
    return()
  endif()
  add_library(firnray_fuzz_support STATIC ${FIRNRAY_FUZZ_DIR}/fuzz_support.cpp ${FIRNRAY_FUZZ_DIR}/fuzz_tables.cpp)
  target_include_directories(firnray_fuzz_support PUBLIC ${FIRNRAY_FUZZ_DIR})
  target_link_libraries(firnray_fuzz_support PUBLIC firnray::firnray)
  firnray_add_warnings(firnray_fuzz_support)
endfunction()

function(firnray_add_fuzzers)
  firnray_add_fuzz_support()
  set(names "")
  foreach(source ${FIRNRAY_FUZZ_HARNESS_SOURCES})
    get_filename_component(name ${source} NAME_WE)
    add_executable(${name} ${source} ${FIRNRAY_FUZZ_DIR}/libfuzzer_main.cpp)
    target_link_libraries(${name} PRIVATE firnray_fuzz_support)
    target_link_options(${name} PRIVATE -fsanitize=fuzzer)
    firnray_add_warnings(${name})
    list(APPEND names ${name})
  endforeach()
  add_custom_target(fuzz_seed_corpus
      COMMAND ${CMAKE_COMMAND} -D SOURCE_DIR=${PROJECT_SOURCE_DIR} -D CORPUS_DIR=${PROJECT_BINARY_DIR}/fuzz-corpus
              "-D HARNESSES=${names}" -P ${FIRNRAY_FUZZ_DIR}/make_seed_corpus.cmake
      COMMENT "Building the fuzz seed corpus in ${PROJECT_BINARY_DIR}/fuzz-corpus"
      VERBATIM)
endfunction()

function(firnray_add_fuzz_replay_tests)
  firnray_add_fuzz_support()
  foreach(source ${FIRNRAY_FUZZ_HARNESS_SOURCES})
    get_filename_component(name ${source} NAME_WE)
    add_executable(replay_${name} ${source} ${FIRNRAY_FUZZ_DIR}/replay_main.cpp)
    target_link_libraries(replay_${name} PRIVATE firnray_fuzz_support)
    firnray_add_warnings(replay_${name})
    # Both folders are passed even when absent (the replay program says so), so that a folder
    # made later is replayed without configuring again.
    set(inputs ${FIRNRAY_FUZZ_DIR}/seeds/${name} ${FIRNRAY_FUZZ_REGRESSIONS_DIR}/${name})
    set(test_name "fuzz inputs kept as regressions replay cleanly through ${name}")
    add_test(NAME ${test_name} COMMAND replay_${name} ${inputs})
    set_tests_properties(${test_name} PROPERTIES SKIP_RETURN_CODE 77 TIMEOUT 120)
  endforeach()
endfunction()
