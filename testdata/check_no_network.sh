#!/usr/bin/env bash
# Runs the demo under strace and fails if the tool opens any internet socket (IPv4 or IPv6).
# Installs Debian's strace where it can (as root with apt-get); where it cannot, says so and skips.
set -euo pipefail
cd "$(dirname "$0")/.."
source testdata/install.sh
ensure check_no_network "command -v strace" "strace is not installed and could not be installed here" strace || exit 0
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
go build -o "$work/cohortmix" ./cmd/cohortmix
if ! strace -f -qq -e trace=socket,connect -o "$work/trace" "$work/cohortmix" demo --dir "$work/demo" --participants 40 --windows 300 --quiet >/dev/null 2>&1; then
  echo "check_no_network: the demo failed under strace (ptrace may be forbidden here): SKIPPED"
  exit 0
fi
if grep -E 'AF_INET6?|connect\(' "$work/trace"; then
  echo "check_no_network: FAIL: the tool opened a network socket (above)"
  exit 1
fi
echo "check_no_network: ok: the demo opened no network socket"
