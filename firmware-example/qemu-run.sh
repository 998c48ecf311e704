#!/usr/bin/env bash
# Cargo runner for the example firmware: runs an ELF under QEMU with semihosting, decodes the
# defmt stream on QEMU's stdout with defmt-print, and exits with the firmware's own exit status
# (semihosting exit code; 124 if it hangs past the timeout).
#
# Usage (cargo appends the ELF path):  qemu-run.sh --cpu CPU --machine MACHINE ELF [QEMU-ARGS...]
# (arguments after the ELF, e.g. from `cargo run -- ...`, are passed to QEMU)
#
# Environment:
#   COILWISE_ICOUNT        QEMU -icount shift (default 10); "off" runs on host time instead.
#                          A fixed shift makes every run instruction-exact and repeatable.
#   COILWISE_QEMU_TIMEOUT  seconds before a hung run is killed (default 120).
#   COILWISE_LOG_FORMAT    defmt-print --log-format (default "{L} {s}": level and message).
#   COILWISE_RAW_OUT       if set, also save the raw defmt byte stream to this file.
#   DEFMT_PRINT            path to defmt-print (default: on PATH, else ~/.cargo/bin/defmt-print).
#
# Only plain text goes to stderr; stdout carries the decoded log.
set -u -o pipefail

cpu=""
machine=""
while [ $# -gt 0 ]; do
  case "$1" in
    --cpu) cpu="$2"; shift 2 ;;
    --machine) machine="$2"; shift 2 ;;
    --) shift; break ;;
    *) break ;;
  esac
done
if [ -z "$cpu" ] || [ -z "$machine" ] || [ $# -lt 1 ]; then
  echo "usage: qemu-run.sh --cpu CPU --machine MACHINE ELF [ARGS...]" >&2
  exit 2
fi
elf="$1"
shift

qemu="${QEMU_SYSTEM_ARM:-qemu-system-arm}"
if ! command -v "$qemu" >/dev/null 2>&1; then
  echo "qemu-run.sh: $qemu not found; install it with:" >&2
  echo "  apt-get install -y --no-install-recommends qemu-system-arm" >&2
  exit 127
fi
decoder="${DEFMT_PRINT:-}"
if [ -z "$decoder" ]; then
  if command -v defmt-print >/dev/null 2>&1; then
    decoder=defmt-print
  else
    decoder="${CARGO_HOME:-$HOME/.cargo}/bin/defmt-print"
  fi
fi
if ! [ -x "$decoder" ] && ! command -v "$decoder" >/dev/null 2>&1; then
  echo "qemu-run.sh: defmt-print not found; install it with:" >&2
  echo "  cargo install defmt-print --version 1.2.0 --locked" >&2
  exit 127
fi

icount=()
shift_n="${COILWISE_ICOUNT:-10}"
if [ "$shift_n" != "off" ]; then
  icount=(-icount "shift=${shift_n}")
fi
timeout_s="${COILWISE_QEMU_TIMEOUT:-120}"
default_format='{L} {s}'
format="${COILWISE_LOG_FORMAT:-$default_format}"
raw="${COILWISE_RAW_OUT:-}"

run_qemu() {
  timeout "$timeout_s" "$qemu" -cpu "$cpu" -machine "$machine" "${icount[@]}" \
    -display none -monitor none -serial none \
    -semihosting-config enable=on,target=native \
    -kernel "$elf" "$@" </dev/null
}

if [ -n "$raw" ]; then
  run_qemu "$@" | tee "$raw" | "$decoder" --log-format "$format" -e "$elf"
else
  run_qemu "$@" | "$decoder" --log-format "$format" -e "$elf"
fi
status=("${PIPESTATUS[@]}")
fw="${status[0]}"
dec="${status[${#status[@]}-1]}"
if [ "$fw" -eq 124 ]; then
  echo "qemu-run.sh: firmware did not exit within ${timeout_s} s (killed, status 124)" >&2
fi
if [ "$dec" -ne 0 ] && [ "$fw" -eq 0 ]; then
  echo "qemu-run.sh: defmt-print failed with status $dec" >&2
  exit "$dec"
fi
exit "$fw"
