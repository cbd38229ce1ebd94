#!/bin/sh
# SPDX-License-Identifier: MIT
# The README's quick start. `cmake/run.sh demo` runs the main program, `cmake/run.sh test`
# runs the whole test suite; `cmake/run.sh docs` rewrites the generated tables in README.md
# and docs/ (accuracy report, demo table, Cortex-M report) from the programs. Each first
# installs the Debian packages it lacks (as root).
set -eu
cd "$(dirname "$0")/.."

# Packages the demo needs, then the extra ones the full test suite needs.
demo_packages="g++ cmake ninja-build gnuplot-nox"
test_packages="$demo_packages doctest-dev libbenchmark-dev clang libclang-rt-14-dev libmpfr-dev libboost-dev gcc-arm-none-eabi libnewlib-arm-none-eabi libstdc++-arm-none-eabi-newlib qemu-system-arm clang-tidy cppcheck"

install_missing() {
  missing=""
  for p in "$@"; do
    dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "ok installed" || missing="$missing $p"
  done
  [ -z "$missing" ] && return 0
  echo "dqfx: installing Debian packages:$missing"
  if [ "$(id -u)" -ne 0 ]; then
    echo "dqfx: run as root (or install them yourself):$missing" >&2
    exit 1
  fi
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  # shellcheck disable=SC2086
  apt-get install -y -qq --no-install-recommends $missing >/dev/null
}

case "${1:-}" in
  demo)
    install_missing $demo_packages
    cmake --preset demo >/dev/null
    cmake --build --preset demo
    ./build/demo/examples/dqfx_demo
    ;;
  test)
    install_missing $test_packages
    for workflow in host host-clang sanitize; do
      echo "dqfx: workflow $workflow"
      cmake --workflow --preset "$workflow"
    done
    # Cortex-M0/M3/M4F/M7 images under QEMU (ctest label `target`): harness runs,
    # golden vectors against the host, ARMv6-M instruction check.
    echo "dqfx: workflow cortex-m"
    cmake --workflow --preset cortex-m
    # Robustness: the compiler matrix (clang++ C++20 -O0 suite; golden vectors with g++ and
    # clang++ at C++17/20, -O0/-O2), libFuzzer (20 s per harness from the checked-in
    # corpus), clang-tidy and cppcheck.
    for workflow in matrix fuzz static-analysis; do
      echo "dqfx: workflow $workflow"
      cmake --workflow --preset "$workflow"
    done
    ;;
  docs)
    install_missing $test_packages
    cmake --preset host >/dev/null
    cmake --build --preset host --target dqfx_docs
    cmake --preset cortex-m >/dev/null
    cmake --build --preset cortex-m --target dqfx_docs_cortex_m
    git diff --stat -- README.md docs 2>/dev/null || true
    ;;
  *)
    echo "usage: $0 demo|test|docs" >&2
    exit 2
    ;;
esac
