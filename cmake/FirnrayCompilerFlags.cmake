# Compiler flags shared by every firnray target: warnings (per target, so they never leak to a
# project that uses the installed package) and the sanitizer and fuzzing instrumentation (for the
# whole build, since an instrumented library needs instrumented programs linked against it).

# The warnings every target gets. -Wall -Wextra plus the ones the code is clean for with GCC 12 and
# Clang 14. Left out on purpose: -Wconversion and -Wsign-conversion (index arithmetic between
# size_t and int is everywhere and casts would hide more than they show) and -Wshadow (it flags
# the idiom `else if (const auto* p = dynamic_cast<...>(x))`).
set(FIRNRAY_WARNING_FLAGS
    -Wall -Wextra -Wpedantic -Wnon-virtual-dtor -Woverloaded-virtual -Wcast-align
    -Wformat=2 -Wimplicit-fallthrough -Wmissing-declarations)
# GCC 12 warns wrongly about std::string concatenation at -O2 and above (GCC bug 105329, fixed in
# GCC 13): the standard library's own memcpy "may overlap".
if(CMAKE_CXX_COMPILER_ID STREQUAL "GNU" AND CMAKE_CXX_COMPILER_VERSION VERSION_LESS 13)
  list(APPEND FIRNRAY_WARNING_FLAGS -Wno-restrict)
endif()

function(firnray_add_warnings target)
  target_compile_options(${target} PRIVATE ${FIRNRAY_WARNING_FLAGS})
  if(FIRNRAY_WARNINGS_AS_ERRORS)
    target_compile_options(${target} PRIVATE -Werror)
  endif()
endfunction()

# FIRNRAY_SANITIZE: a comma-separated list for -fsanitize= ("address,undefined", "thread", ...).
# Undefined behaviour stops the program (-fno-sanitize-recover) so that a test that hits it fails.
if(FIRNRAY_SANITIZE)
  set(FIRNRAY_SANITIZER_FLAGS -fsanitize=${FIRNRAY_SANITIZE} -fno-omit-frame-pointer)
  if(FIRNRAY_SANITIZE MATCHES "undefined")
    list(APPEND FIRNRAY_SANITIZER_FLAGS -fno-sanitize-recover=undefined)
  endif()
  add_compile_options(${FIRNRAY_SANITIZER_FLAGS})
  add_link_options(${FIRNRAY_SANITIZER_FLAGS})
endif()

# FIRNRAY_BUILD_FUZZ: libFuzzer needs Clang. The library and the harnesses get coverage
# instrumentation (fuzzer-no-link) plus AddressSanitizer and UndefinedBehaviorSanitizer; only the
# fuzzer programs link libFuzzer's main (-fsanitize=fuzzer, see fuzz/CMakeLists.txt).
if(FIRNRAY_BUILD_FUZZ)
  if(NOT CMAKE_CXX_COMPILER_ID STREQUAL "Clang")
    message(FATAL_ERROR "FIRNRAY_BUILD_FUZZ needs Clang (libFuzzer): configure with "
                        "-DCMAKE_CXX_COMPILER=clang++ (Debian: apt-get install clang libclang-rt-14-dev)")
  endif()
  if(FIRNRAY_SANITIZE)
    message(FATAL_ERROR "FIRNRAY_BUILD_FUZZ brings its own sanitizers (address,undefined): leave FIRNRAY_SANITIZE empty")
  endif()
  set(FIRNRAY_SANITIZER_FLAGS -fsanitize=address,undefined -fno-sanitize-recover=undefined -fno-omit-frame-pointer)
  add_compile_options(-fsanitize=fuzzer-no-link ${FIRNRAY_SANITIZER_FLAGS})
  add_link_options(${FIRNRAY_SANITIZER_FLAGS})
endif()
