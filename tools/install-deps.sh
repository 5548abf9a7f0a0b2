#!/usr/bin/env bash
# Installs every build and test dependency of unseen from Debian 12 packages.
# Runs apt-get only for packages that are missing, so a second run is quick.
set -euo pipefail
packages=(
  build-essential cmake pkg-config
  libssl-dev libsqlite3-dev libsqlitecpp-dev libroaring-dev libzstd-dev
  libfmt-dev nlohmann-json3-dev libcli11-dev libeigen3-dev libtomlplusplus-dev libboost-dev libseccomp-dev
  libgtest-dev libgmock-dev
  python3 python3-numpy python3-scipy python3-sklearn python3-pandas
)
missing=()
for p in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if ((${#missing[@]})); then
  sudo=""
  [ "$(id -u)" -eq 0 ] || sudo="sudo"
  $sudo apt-get update -qq
  DEBIAN_FRONTEND=noninteractive $sudo apt-get install -y -qq --no-install-recommends "${missing[@]}"
fi
