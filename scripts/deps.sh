#!/usr/bin/env bash
# deps.sh - install the Debian packages msgcensus needs, only those missing.
#   scripts/deps.sh            build + run (MPI, HDF5, zstd, xxHash)
#   scripts/deps.sh --test     also what the test suite needs
set -euo pipefail

build_pkgs=(build-essential cmake pkg-config libopenmpi-dev openmpi-bin
            libhdf5-openmpi-dev hdf5-tools libzstd-dev zstd libxxhash-dev xxhash)
test_pkgs=(libcmocka-dev libgsl-dev python3 python3-numpy python3-scipy python3-h5py
           clang libclang-rt-14-dev time chromium fonts-liberation gfortran
           slurmctld slurmd slurm-client munge slurm-wlm-torque netpipe-openmpi)

want=("${build_pkgs[@]}")
[ "${1:-}" = "--test" ] && want+=("${test_pkgs[@]}")

missing=()
for p in "${want[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if [ ${#missing[@]} -eq 0 ]; then
  exit 0
fi
echo "msgcensus: installing Debian packages: ${missing[*]}" >&2
SUDO=""
[ "$(id -u)" -eq 0 ] || SUDO="sudo"
export DEBIAN_FRONTEND=noninteractive
$SUDO apt-get update -qq
$SUDO apt-get install -y -qq --no-install-recommends "${missing[@]}" >/dev/null
