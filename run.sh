#!/usr/bin/env bash
# Set-up and the two everyday commands of ringsum on Debian/Ubuntu.
#   ./run.sh demo   build ringsum and run the bundled demo scenario
#   ./run.sh test   run the whole test suite (format, lints, unit, reference and CLI tests)
# Installs the system libraries (GDAL, PROJ, pkg-config, libclang) through apt when missing.
set -euo pipefail
cd "$(dirname "$0")"

packages=(libgdal-dev libproj-dev pkg-config libclang-dev)

ensure_packages() {
  local missing=()
  for p in "${packages[@]}"; do
    dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
  done
  if [ ${#missing[@]} -gt 0 ]; then
    echo "run.sh: installing ${missing[*]} with apt" >&2
    local sudo=""
    [ "$(id -u)" -eq 0 ] || sudo="sudo"
    $sudo apt-get update -qq
    DEBIAN_FRONTEND=noninteractive $sudo apt-get install -y -qq "${missing[@]}"
  fi
  if ! command -v cargo >/dev/null 2>&1; then
    echo "run.sh: cargo is missing; install Rust from https://rustup.rs and run this again" >&2
    exit 1
  fi
}

case "${1:-}" in
  demo)
    ensure_packages
    cargo build --release --locked
    ./target/release/ringsum demo "${@:2}"
    ;;
  test)
    ensure_packages
    cargo fmt --all -- --check
    cargo clippy --locked --all-targets -- -D warnings
    # The core (kernels, zones, engine, reduction, DEM grid) builds without GDAL and PROJ.
    cargo build --locked --lib --no-default-features
    RUSTDOCFLAGS="-D warnings" cargo doc --locked --no-deps
    cargo test --locked
    ;;
  *)
    echo "usage: ./run.sh demo | ./run.sh test" >&2
    exit 2
    ;;
esac
