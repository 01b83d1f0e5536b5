#!/usr/bin/env bash
# Installs the Debian packages the tests use: Chromium (UI tests), the rig-control daemon (libhamlib-utils),
# socat (virtual serial ports), numpy/scipy (reference libraries), poppler-utils (PDF checks), xvfb, sox,
# and the compiler toolchain better-sqlite3 needs when no prebuilt binary fits.
set -euo pipefail
export DEBIAN_FRONTEND=noninteractive
SUDO=""
if [ "$(id -u)" != "0" ]; then SUDO="sudo"; fi
$SUDO apt-get update -qq
$SUDO apt-get install -y -qq --no-install-recommends \
  chromium libhamlib-utils socat python3 python3-numpy python3-scipy poppler-utils xvfb sox fonts-dejavu-core \
  build-essential python3-setuptools ca-certificates >/dev/null
echo "Debian packages for the tests are installed."
