#!/usr/bin/env bash
# Makes sure a headless Chromium is available for the HTML report test (tests/report_html_chromium.rs).
# Installs the Debian package `chromium` when running as root; otherwise explains what to do.
set -euo pipefail

for name in chromium chromium-browser; do
    if command -v "$name" >/dev/null 2>&1; then
        echo "chromium found: $(command -v "$name")"
        exit 0
    fi
done

if [ "$(id -u)" -ne 0 ]; then
    echo "chromium is not installed and this script is not running as root." >&2
    echo "Install the Debian package yourself: sudo apt-get install -y chromium" >&2
    exit 1
fi

export DEBIAN_FRONTEND=noninteractive
apt-get update -qq
apt-get install -y -qq --no-install-recommends chromium fonts-dejavu-core >/dev/null
command -v chromium >/dev/null 2>&1 || { echo "chromium install failed" >&2; exit 1; }
echo "chromium installed: $(command -v chromium)"
