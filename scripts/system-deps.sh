#!/usr/bin/env bash
# Debian packages the build and the tests need. Installs only what is missing.
# chromium: driven by Playwright (executable_path) for the e2e tests and screenshots.
# firefox-esr: the engine suite drives it over WebDriver BiDi (--remote-debugging-port; no geckodriver).
# webkit2gtk-driver: WebKitWebDriver, the engine suite's WebKit (WebKitGTK, Safari's engine), run under Xvfb (xvfb).
set -euo pipefail
need=()
command -v chromium >/dev/null 2>&1 || need+=(chromium)
command -v firefox-esr >/dev/null 2>&1 || need+=(firefox-esr)
command -v WebKitWebDriver >/dev/null 2>&1 || need+=(webkit2gtk-driver)
command -v Xvfb >/dev/null 2>&1 || need+=(xvfb)
command -v node >/dev/null 2>&1 || need+=(nodejs npm)
# libreoffice-calc-nogui: soffice --headless --convert-to, for tests/test_csv_spreadsheet.py (CSV opened in Calc).
command -v soffice >/dev/null 2>&1 || need+=(libreoffice-calc-nogui)
# poppler-utils: pdftotext and pdfinfo read the printed report back (e2e/test_report_print.py); pdftoppm draws
# the printed page for docs/img (e2e/screenshots.py).
command -v pdftotext >/dev/null 2>&1 || need+=(poppler-utils)
if [ ${#need[@]} -eq 0 ]; then exit 0; fi
if [ "$(id -u)" != 0 ]; then
  echo "missing Debian packages: ${need[*]}; run as root or install them: apt-get install ${need[*]}" >&2
  exit 1
fi
echo "installing Debian packages: ${need[*]}"
export DEBIAN_FRONTEND=noninteractive
apt-get update -qq
apt-get install -y -qq --no-install-recommends "${need[@]}" >/dev/null
