#!/usr/bin/env bash
# Installs the system libraries WeasyPrint needs for fast, deterministic PDFs, where apt is available
# and we are root. Elsewhere it only says what is missing; Python packages come from pyproject.toml.
set -u
need=()
for pkg in libpango-1.0-0 libpangoft2-1.0-0 libharfbuzz-subset0 poppler-utils; do
  dpkg -s "$pkg" >/dev/null 2>&1 || need+=("$pkg")
done
[ ${#need[@]} -eq 0 ] && exit 0
if command -v apt-get >/dev/null 2>&1 && [ "$(id -u)" = "0" ]; then
  echo "Installing system packages: ${need[*]}"
  apt-get update -qq >/dev/null 2>&1 || true
  DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "${need[@]}" >/dev/null 2>&1 \
    || echo "warning: could not install ${need[*]}; PDFs may be slower" >&2
else
  echo "warning: missing system packages ${need[*]} (install them for fast, deterministic PDFs)" >&2
fi
exit 0
