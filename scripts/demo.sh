#!/usr/bin/env bash
# SPDX-License-Identifier: Apache-2.0
# `make demo`: runs the demo study (configs/demo.toml) and prints where its report is.
# Usage: scripts/demo.sh path/to/recofold [output folder]
set -euo pipefail
exe=${1:?usage: scripts/demo.sh path/to/recofold [output folder]}
out=${2:-demo-out}
cd "$(dirname "$0")/.."
exec "$exe" demo --out "$out"
