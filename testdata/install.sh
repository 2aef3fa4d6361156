# Sourced by the testdata scripts that need a Debian package.
#
# ensure NAME CHECK PACKAGE...: runs the shell command CHECK; when it fails and this is root with
# apt-get, installs Debian's PACKAGEs (saying so, as NAME) and runs CHECK again. Its status is
# CHECK's last one, so a script can say it skips when the tool is still missing.
ensure() {
  local name=$1 check=$2
  shift 2
  if eval "$check" >/dev/null 2>&1; then
    return 0
  fi
  if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
    echo "$name: installing $* with apt-get"
    (apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "$@") >/dev/null 2>&1 || true
  fi
  eval "$check" >/dev/null 2>&1
}
