#!/bin/sh
# Set-up for a fresh Debian machine: installs the missing Debian packages, builds, then
#   ./setup.sh demo   runs the demo scenario on the built-in default model (outputs in firnray-demo/)
#   ./setup.sh test   builds the test suite and runs it through CTest
set -eu
cd "$(dirname "$0")"
what="${1:-}"
case "$what" in
  demo|test) ;;
  *) echo "usage: ./setup.sh demo|test" >&2; exit 2 ;;
esac

packages="cmake g++ make libboost-dev libeigen3-dev libfmt-dev libcli11-dev catch2 libtomlplusplus-dev librsvg2-bin"
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
cmake -S . -B build -DCMAKE_BUILD_TYPE=Release
cmake --build build -j "$jobs"

if [ "$what" = demo ]; then
  sh demo/run_demo.sh build/firnray firnray-demo
else
  cd build && ctest --output-on-failure -j "$jobs"
fi
