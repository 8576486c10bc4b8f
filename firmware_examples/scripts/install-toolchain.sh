#!/bin/sh
# Install the Cortex-M cross toolchain and the emulator when they are missing (Debian / Ubuntu).
#
#   gcc-arm-none-eabi        arm-none-eabi-gcc, -size, -nm (binutils come with it)
#   libnewlib-arm-none-eabi  newlib-nano's memcpy/memset for the bare-metal link
#   qemu-system-arm          the MPS2 AN385 board emulator
#
# Needs root (or sudo) and network; about 1 minute and 0.9 GB on a fresh machine.
# Does nothing when everything is already installed.
set -eu

CROSS="${CROSS:-arm-none-eabi-}"
QEMU="${QEMU:-qemu-system-arm}"

have_toolchain() {
    command -v "${CROSS}gcc" >/dev/null 2>&1 || return 1
    command -v "${CROSS}size" >/dev/null 2>&1 || return 1
    command -v "$QEMU" >/dev/null 2>&1 || return 1
    # newlib: the nano specs file must resolve to a real path
    specs="$("${CROSS}gcc" -print-file-name=nano.specs)"
    [ -f "$specs" ] || return 1
    return 0
}

if have_toolchain; then
    echo "install-toolchain: ${CROSS}gcc, newlib and $QEMU are present"
    exit 0
fi

if [ "$(id -u)" -eq 0 ]; then
    SUDO=""
elif command -v sudo >/dev/null 2>&1; then
    SUDO="sudo"
else
    echo "install-toolchain: the Cortex-M toolchain is missing and this is not root; run as root:" >&2
    echo "  apt-get update && apt-get install -y --no-install-recommends gcc-arm-none-eabi libnewlib-arm-none-eabi qemu-system-arm" >&2
    exit 1
fi
if ! command -v apt-get >/dev/null 2>&1; then
    echo "install-toolchain: no apt-get here; install gcc-arm-none-eabi, newlib for it and qemu-system-arm" >&2
    exit 1
fi

echo "install-toolchain: installing gcc-arm-none-eabi libnewlib-arm-none-eabi qemu-system-arm"
$SUDO apt-get update
$SUDO env DEBIAN_FRONTEND=noninteractive apt-get install -y --no-install-recommends \
    gcc-arm-none-eabi libnewlib-arm-none-eabi qemu-system-arm

if ! have_toolchain; then
    echo "install-toolchain: installed, but ${CROSS}gcc / newlib / $QEMU still not usable" >&2
    exit 1
fi
echo "install-toolchain: done"
