#!/usr/bin/env bash
# Installs the Debian packages named on the command line that are not yet
# installed. Runs apt-get as root, or through sudo when that is available;
# otherwise it names what is missing and stops.
set -euo pipefail
missing=()
for p in "$@"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q 'install ok installed' || missing+=("$p")
done
[ ${#missing[@]} -eq 0 ] && exit 0
echo "installing Debian packages: ${missing[*]}" >&2
if [ "$(id -u)" -eq 0 ]; then
  run=()
elif command -v sudo >/dev/null 2>&1; then
  run=(sudo)
else
  echo "missing Debian packages: ${missing[*]}; install them as root: apt-get install ${missing[*]}" >&2
  exit 1
fi
stamp=/var/lib/apt/periodic/telltale-update-stamp
if [ ! -e "$stamp" ] || [ -n "$(find "$stamp" -mmin +360 2>/dev/null)" ]; then
  "${run[@]}" apt-get update -qq
  "${run[@]}" mkdir -p "$(dirname "$stamp")" && "${run[@]}" touch "$stamp"
fi
DEBIAN_FRONTEND=noninteractive "${run[@]}" apt-get install -y -qq --no-install-recommends "${missing[@]}"
