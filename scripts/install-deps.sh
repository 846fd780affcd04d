#!/usr/bin/env bash
# SPDX-License-Identifier: Apache-2.0
# Installs every Debian 12 package recofold needs to build, run and test.
# Safe to run again: apt-get skips what is already there. Needs root.
set -euo pipefail

PACKAGES=(
  # toolchain
  build-essential cmake pkg-config ccache git
  # libraries of the design card
  libfftw3-dev libeigen3-dev libinsighttoolkit5-dev libcli11-dev
  libhdf5-dev libgtest-dev libtomlplusplus-dev
  # zlib: PNG writer and the length checks of compressed NIfTI/MetaImage/NRRD (src/io)
  zlib1g-dev
  # libpng: PNG import (src/io/png_reader.cc)
  libpng-dev
  # raw k-space in the ISMRMRD format (src/io/ismrmrd_file.cc) and its reference
  # tools (tests/reference/io_ismrmrd_tools.py)
  libismrmrd-dev ismrmrd-tools
  # DICOM test images and an independent DICOM reader (tests/reference/io_dicom_pydicom.py only)
  python3-pydicom
  # studies as MPI jobs (src/study/mpi_dispatch.cc, CMake option RECOFOLD_WITH_MPI;
  # mpirun for tests/cli/study_mpi.py)
  libopenmpi-dev openmpi-bin
  # learning (src/learn only)
  libtorch-dev
  # independent reference checks (tests/reference), run with /usr/bin/python3
  python3 python3-numpy python3-scipy python3-skimage python3-pywt
  python3-h5py python3-nibabel python3-torch
  # GNU time: peak memory of a benchmarked process measured from a small parent (bench/run_all.py)
  time
  # fuzz targets (make fuzz): clang with libFuzzer and the sanitizer runtimes,
  # and clang's OpenMP runtime
  clang-14 libclang-rt-14-dev libomp-14-dev
  # headless browser for the report rendering check (tests/cli/study_report_browser.py)
  chromium
)

missing=()
for p in "${PACKAGES[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$p")
  fi
done

if [ ${#missing[@]} -eq 0 ]; then
  echo "install-deps: all ${#PACKAGES[@]} packages present"
  exit 0
fi

SUDO=""
if [ "$(id -u)" -ne 0 ]; then SUDO="sudo"; fi
echo "install-deps: installing ${#missing[@]} packages: ${missing[*]}"
export DEBIAN_FRONTEND=noninteractive
$SUDO apt-get update -q
$SUDO apt-get install -y -q --no-install-recommends "${missing[@]}"
echo "install-deps: done"
