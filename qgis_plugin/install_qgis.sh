#!/usr/bin/env bash
# Install Debian's QGIS 3.22 (PyQGIS + qgis_process), numpy, GDAL bindings and pytest for Debian's
# Python, if missing.
set -euo pipefail
need=()
[ -x /usr/bin/qgis_process.bin ] || need+=(qgis qgis-providers python3-qgis)
/usr/bin/python3 -c "import qgis.core" 2>/dev/null || need+=(python3-qgis)
/usr/bin/python3 -c "import pytest" 2>/dev/null || need+=(python3-pytest)
# numpy for the engine inside QGIS; GDAL's Python bindings for the plugin's rotated-DEM check and
# for the QGIS tests' own readers (neither is a hard dependency of python3-qgis).
/usr/bin/python3 -c "import numpy" 2>/dev/null || need+=(python3-numpy)
/usr/bin/python3 -c "from osgeo import gdal" 2>/dev/null || need+=(python3-gdal)
# Debian's chromium for the headless-browser test of the HTML report (tests/test_report_browser.py).
command -v chromium >/dev/null 2>&1 || need+=(chromium)
if [ ${#need[@]} -eq 0 ]; then exit 0; fi
SUDO=""
if [ "$(id -u)" != "0" ]; then SUDO="sudo"; fi
echo "installing Debian packages: ${need[*]}"
$SUDO apt-get update -qq
DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq --no-install-recommends "${need[@]}" >/dev/null
