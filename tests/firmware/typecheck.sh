#!/usr/bin/env bash
# Type-check firmware/ against the MicroPython stub packages for rp2 (Pico) and esp32 with pyright.
# Installs the stubs into firmware/typings/<board> (git-ignored) if missing; pyright comes from
# `npm ci --prefix tests/firmware/mp`.
set -euo pipefail
cd "$(dirname "$0")/../.."
PYRIGHT=tests/firmware/mp/node_modules/.bin/pyright
declare -A STUBS=(
  [rp2]="micropython-rp2-rpi-pico-stubs==1.29.0.post1"
  [esp32]="micropython-esp32-stubs==1.29.0.post1"
)
for board in rp2 esp32; do
  if [ ! -f "firmware/typings/$board/machine/__init__.pyi" ] && [ ! -f "firmware/typings/$board/machine.pyi" ]; then
    "${PYTHON:-python3}" -m pip install --quiet --disable-pip-version-check --no-deps --target "firmware/typings/$board" \
      "${STUBS[$board]}" "micropython-stdlib-stubs==1.29.0.post2"
  fi
  echo "::: pyright, $board stubs"
  "$PYRIGHT" -p "tests/firmware/typecheck/pyright-$board.json"
done
