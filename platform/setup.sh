#!/usr/bin/env bash
# Installs the Debian 12 packages Furrow needs to build and test, only those
# that are missing. Runs as root (or through sudo when it is available).
set -euo pipefail

PACKAGES=(
  cmake g++ make pkg-config
  libeigen3-dev libboost-math-dev
  libsqlite3-dev libsodium-dev libcairo2-dev libqrencode-dev
  libimgui-dev libglfw3-dev libgl-dev libstb-dev fonts-dejavu-core
  nlohmann-json3-dev libcli11-dev doctest-dev
  python3 python3-scipy python3-statsmodels python3-pandas python3-numpy
  xvfb xauth x11-xserver-utils libgl1-mesa-dri
  chromium xdotool poppler-utils zbar-tools
)

missing=()
for p in "${PACKAGES[@]}"; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
    missing+=("$p")
  fi
done

if [ ${#missing[@]} -eq 0 ]; then
  echo "setup: every package is installed"
  exit 0
fi

SUDO=""
if [ "$(id -u)" -ne 0 ]; then
  if command -v sudo >/dev/null; then SUDO="sudo"; else
    echo "setup: missing ${missing[*]}; run this script as root to install them" >&2
    exit 1
  fi
fi
echo "setup: installing ${missing[*]}"
$SUDO apt-get update -qq
DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq --no-install-recommends "${missing[@]}"
