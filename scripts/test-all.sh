#!/usr/bin/env bash
# Sets up and runs Plumbline's whole test suite: installs what it needs (npm packages, Debian's
# chromium for the browser tests, R with its reference packages for the live reference checks),
# builds the app, and runs every Vitest project. The tests start the fake identity provider and
# the app server themselves.
set -euo pipefail
cd "$(dirname "$0")/.."

debian_packages=(chromium libreoffice-writer-nogui r-base-core r-cran-car r-cran-lmtest r-cran-sandwich r-cran-nortest r-cran-emmeans r-cran-mass r-cran-survival r-cran-haven r-cran-nlme r-cran-numderiv r-cran-lme4 r-cran-pbkrtest r-cran-lmertest)
missing=()
for p in "${debian_packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if [ ${#missing[@]} -gt 0 ]; then
  if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null; then
    echo "Installing Debian packages: ${missing[*]}"
    apt-get update -qq
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends "${missing[@]}" >/dev/null
  else
    echo "Missing Debian packages (install them as root): ${missing[*]}" >&2
    command -v chromium >/dev/null || exit 1
  fi
fi

npm ci --no-audit --no-fund
# Layer rules, lint and formatting first: a violation fails the run before the tests start.
npm run lint
npm run format:check
npm run build
npx vitest run
