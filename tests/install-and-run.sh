#!/usr/bin/env bash
# Installs everything the rowcast test suite needs on a fresh Debian/Ubuntu machine with Python 3.11+,
# then runs the whole suite. System packages come from apt-get (through sudo when not root); Python
# packages go into .venv beside the checkout.
set -euo pipefail
cd "$(dirname "$0")/.."

packages=(gcc make pkg-config gcc-avr binutils-avr avr-libc simavr libsimavr-dev libelf-dev ngspice tmux
          clang libclang-rt-dev)
python3 -c "import ensurepip" 2>/dev/null || packages+=(python3-venv)
missing=()
for p in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if [ ${#missing[@]} -gt 0 ]; then
  echo "installing system packages: ${missing[*]}"
  as_root=(); [ "$(id -u)" -eq 0 ] || as_root=(sudo)
  "${as_root[@]}" apt-get update -qq
  DEBIAN_FRONTEND=noninteractive "${as_root[@]}" apt-get install -y -qq "${missing[@]}"
fi

[ -x .venv/bin/python ] || python3 -m venv .venv
.venv/bin/python -m pip install -q --upgrade pip
.venv/bin/python -m pip install -q -e '.[test]'
export PATH="$PWD/.venv/bin:$PATH"
exec .venv/bin/python -m pytest -q "$@"
