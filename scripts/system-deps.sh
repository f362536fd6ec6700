#!/usr/bin/env bash
# Installs what reportgen and its tests need beyond Python packages, where apt is available and we
# are root; elsewhere it only says what is missing. Python packages come from pyproject.toml.
#   - WeasyPrint's libraries, with HarfBuzz subsetting for fast, deterministic PDFs; poppler-utils
#     (pdftotext, pdftoppm) for the PDF tests.
#   - Debian's Chromium and LibreOffice Calc for the browser tests (tests/render/test_browser.py:
#     axe-core at 390 and 1280 px) and the workbook test (tests/render/test_workbook.py); DejaVu
#     fonts for LibreOffice.
#   - Node.js packages of tests/browser (puppeteer-core and axe-core, pinned by package-lock.json)
#     with `npm ci`; they drive /usr/bin/chromium, so no browser is downloaded.
set -u
need=()
for pkg in libpango-1.0-0 libpangoft2-1.0-0 libharfbuzz-subset0 poppler-utils \
           chromium libreoffice-calc-nogui fonts-dejavu-core; do
  dpkg -s "$pkg" >/dev/null 2>&1 || need+=("$pkg")
done
command -v node >/dev/null 2>&1 || need+=(nodejs)
command -v npm >/dev/null 2>&1 || need+=(npm)
if [ ${#need[@]} -gt 0 ]; then
  if command -v apt-get >/dev/null 2>&1 && [ "$(id -u)" = "0" ]; then
    echo "Installing system packages: ${need[*]}"
    apt-get update -qq >/dev/null 2>&1 || true
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends "${need[@]}" \
      >/dev/null 2>&1 || echo "warning: could not install ${need[*]}" >&2
  else
    echo "warning: missing system packages ${need[*]} (PDFs may be slower; the browser and" \
         "LibreOffice tests skip)" >&2
  fi
fi
browser_tests="$(cd "$(dirname "$0")/.." && pwd)/tests/browser"
if command -v npm >/dev/null 2>&1 && [ -f "$browser_tests/package-lock.json" ]; then
  if [ ! -d "$browser_tests/node_modules" ] \
     || [ "$browser_tests/package-lock.json" -nt "$browser_tests/node_modules" ]; then
    echo "Installing the browser-test packages (npm ci in tests/browser)"
    (cd "$browser_tests" && PUPPETEER_SKIP_DOWNLOAD=1 npm ci --no-audit --no-fund \
       --ignore-scripts --loglevel=error >/dev/null) \
      && touch "$browser_tests/node_modules" \
      || echo "warning: npm ci failed in tests/browser; the browser tests will fail" >&2
  fi
fi
exit 0
