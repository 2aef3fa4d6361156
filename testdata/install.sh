# Sourced by the testdata scripts that need a Debian package.
#
# ensure NAME CHECK MISSING PACKAGE...: runs the shell command CHECK; when it fails and this is
# root with apt-get, installs Debian's PACKAGEs (saying so, as NAME) and runs CHECK again. When
# CHECK still fails it says "NAME: SKIPPED: MISSING" and returns 1, so that a script can end
# there with `|| exit 0`.
ensure() {
  local name=$1 check=$2 missing=$3
  shift 3
  if eval "$check" >/dev/null 2>&1; then
    return 0
  fi
  if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
    echo "$name: installing $* with apt-get"
    (apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "$@") >/dev/null 2>&1 || true
  fi
  if ! eval "$check" >/dev/null 2>&1; then
    echo "$name: SKIPPED: $missing"
    return 1
  fi
}
