#!/bin/sh
# Set-up for a fresh Debian machine: installs the missing Debian packages, builds, then
#   ./setup.sh demo   Release build, then the demo scenario on the built-in default model
#                     (outputs in firnray-demo/)
#   ./setup.sh test   what CI runs: the Release build and the whole test suite (build/), the same
#                     suite under AddressSanitizer + UndefinedBehaviorSanitizer (build-sanitize/),
#                     and the libFuzzer harnesses built with clang and run briefly (build-fuzz/)
set -eu
cd "$(dirname "$0")"
what="${1:-}"
case "$what" in
  demo|test) ;;
  *) echo "usage: ./setup.sh demo|test" >&2; exit 2 ;;
esac

packages="cmake g++ make ninja-build ccache libboost-dev libeigen3-dev libfmt-dev libcli11-dev catch2 libtomlplusplus-dev librsvg2-bin"
# The sanitizer and fuzz builds: clang with its sanitizer and libFuzzer runtimes, llvm-symbolizer
# for readable stack traces.
if [ "$what" = test ]; then packages="$packages clang libclang-rt-14-dev llvm-14"; fi
missing=""
for p in $packages; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing="$missing $p"
done
if [ -n "$missing" ]; then
  echo "installing Debian packages:$missing"
  SUDO=""; [ "$(id -u)" -eq 0 ] || SUDO="sudo"
  $SUDO apt-get update -qq
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq $missing
fi

jobs=$(nproc 2>/dev/null || echo 2)
# ccache with paths taken relative to this folder, so that another clone reuses the cache.
export CCACHE_BASEDIR="$PWD" CCACHE_NOHASHDIR=1
configure() {  # configure BUILD_DIR [cmake options...]
  dir="$1"; shift
  cmake -S . -B "$dir" -G Ninja -DCMAKE_CXX_COMPILER_LAUNCHER=ccache "$@"
}
step() { echo "== $* ($(date -u +%H:%M:%S))"; }

step "Release build"
configure build -DCMAKE_BUILD_TYPE=Release
cmake --build build -j "$jobs"

if [ "$what" = demo ]; then
  sh demo/run_demo.sh build/firnray firnray-demo
  exit 0
fi

step "Release tests"
(cd build && ctest --output-on-failure -j "$jobs")

# -O1 with line tables and assertions on: quick to build, and readable reports.
step "AddressSanitizer + UndefinedBehaviorSanitizer build"
configure build-sanitize -DCMAKE_BUILD_TYPE=RelWithDebInfo -DCMAKE_CXX_FLAGS_RELWITHDEBINFO="-O1 -g1" \
  -DFIRNRAY_SANITIZE=address,undefined -DFIRNRAY_BUILD_BENCH=OFF
cmake --build build-sanitize -j "$jobs"
step "tests under the sanitizers"
export ASAN_OPTIONS="detect_leaks=1:detect_stack_use_after_return=1"
export UBSAN_OPTIONS="print_stacktrace=1:halt_on_error=1"
(cd build-sanitize && ctest --output-on-failure -j "$jobs")

step "fuzz build (clang, libFuzzer)"
configure build-fuzz -DCMAKE_CXX_COMPILER=clang++ -DCMAKE_BUILD_TYPE=RelWithDebInfo \
  -DCMAKE_CXX_FLAGS_RELWITHDEBINFO="-O1 -g1" -DFIRNRAY_BUILD_FUZZ=ON \
  -DFIRNRAY_BUILD_TESTS=OFF -DFIRNRAY_BUILD_BENCH=OFF -DFIRNRAY_BUILD_CLI=OFF
cmake --build build-fuzz -j "$jobs"
cmake --build build-fuzz --target fuzz_seed_corpus
step "short fuzz runs"
sh fuzz/run_short.sh build-fuzz
step "done"
