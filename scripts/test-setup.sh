#!/usr/bin/env bash
# Installs what the tests need beyond npm: Debian's Chromium for browser tests and the Python
# reference packages (astropy, synphot, extinction, scipy) that produce and check fixtures.
# Skips whatever is already present.
set -euo pipefail
need=()
[ -x /usr/bin/chromium ] || need+=(chromium)
for mod in astropy synphot extinction scipy numpy; do
  /usr/bin/python3 -c "import $mod" 2>/dev/null || need+=("python3-$mod")
done
command -v redis-server >/dev/null 2>&1 || need+=(redis-server)
# The Redis backend tests put workers in network namespaces (ip netns) where that is permitted.
command -v ip >/dev/null 2>&1 || need+=(iproute2)
if [ ${#need[@]} -gt 0 ]; then
  echo "test:setup: installing ${need[*]}"
  SUDO=""; [ "$(id -u)" -eq 0 ] || SUDO="sudo"
  $SUDO apt-get update -qq
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq --no-install-recommends "${need[@]}"
else
  echo "test:setup: chromium and python3 reference packages present"
fi
