#!/usr/bin/env bash
# Install the peer programs the benchmarks compare against (npm run bench),
# from Debian's own packages:
#   r-base-core, r-cran-shapes  -> /usr/bin/Rscript with shapes::procGPA
#   python3-scipy               -> scipy.optimize.linear_sum_assignment for /usr/bin/python3
# Uses sudo when not run as root. The benchmarks skip a missing peer with a message.
set -euo pipefail

packages=(r-base-core r-cran-shapes python3-scipy)

if [ "$(id -u)" -eq 0 ]; then
  SUDO=()
elif command -v sudo >/dev/null 2>&1; then
  SUDO=(sudo)
else
  echo "install-bench-peers: not root and sudo is not available; install as root: apt-get install ${packages[*]}" >&2
  exit 1
fi

if ! command -v apt-get >/dev/null 2>&1; then
  echo "install-bench-peers: apt-get not found (Debian or Ubuntu needed); install ${packages[*]} by other means" >&2
  exit 1
fi

"${SUDO[@]}" apt-get update
DEBIAN_FRONTEND=noninteractive "${SUDO[@]}" apt-get install -y --no-install-recommends "${packages[@]}"

# Check what the benchmarks will use.
/usr/bin/Rscript -e 'suppressPackageStartupMessages(library(shapes)); cat("R shapes", as.character(packageVersion("shapes")), "\n")'
/usr/bin/python3 -c 'import scipy, scipy.optimize; print("scipy", scipy.__version__)'
