#!/bin/sh
# Install the Debian packages the build and the tests need, if any are
# missing: directly as root, through sudo otherwise; with neither, print the
# exact apt-get line and fail.
set -u
PKGS="make gcc pkg-config libgsl-dev libinih-dev libnetcdf-dev libcmocka-dev \
libpng-dev libcairo2-dev libpango1.0-dev netcdf-bin poppler-utils \
python3 python3-numpy python3-scipy python3-mpmath python3-netcdf4 \
libopenmpi-dev openmpi-bin clang libclang-rt-dev valgrind"

missing=""
for p in $PKGS; do
    s=$(dpkg-query -W -f='${Status}' "$p" 2>/dev/null)
    case "$s" in
        *"ok installed") ;;
        *) missing="$missing $p" ;;
    esac
done
[ -z "$missing" ] && exit 0

echo "vibrogate: installing missing Debian packages:$missing"
if [ "$(id -u)" -eq 0 ]; then
    SUDO=""
elif command -v sudo >/dev/null 2>&1 && sudo -n true 2>/dev/null; then
    SUDO="sudo"
else
    echo "vibrogate: cannot install packages (not root, no sudo); run:" >&2
    echo "  sudo apt-get update && sudo apt-get install -y$missing" >&2
    exit 1
fi
$SUDO apt-get update -q >/dev/null || exit 1
DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -q --no-install-recommends $missing || exit 1
