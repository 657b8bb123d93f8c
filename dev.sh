#!/usr/bin/env bash
# Set-up and entry point for a fresh machine: creates .venv on first use, installs benchnf
# into it with the versions pinned in requirements-dev.lock (again whenever pyproject.toml or the lock
# changes), then runs the demo or the test suite.
#   ./dev.sh demo [benchnf demo options]   analyse the shipped demo captures
#   ./dev.sh test [pytest options]         run the whole test suite
#   ./dev.sh lock                          pin the newest releases into requirements-dev.lock
# BENCHNF_NEWEST=1 installs the newest releases instead of the lock (into .venv-newest), as CI does once.
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
lock="$here/requirements-dev.lock"
extras="test,fast,desk"
python="${PYTHON:-python3}"
if [ "${BENCHNF_NEWEST:-}" = 1 ]; then
  venv="${BENCHNF_VENV:-$here/.venv-newest}"
  constraints=()
else
  venv="${BENCHNF_VENV:-$here/.venv}"
  constraints=(-c "$lock")
fi

ensure_venv() {
  if [ ! -x "$venv/bin/python" ]; then
    if ! "$python" -c 'import sys; sys.exit(sys.version_info < (3, 10))' 2>/dev/null; then
      echo "dev.sh: benchnf needs Python 3.10 or newer as '$python' (set PYTHON=...)" >&2
      exit 2
    fi
    "$python" -m venv "$venv" || {
      echo "dev.sh: could not create a virtual environment; on Debian/Ubuntu: apt-get install python3-venv" >&2
      exit 2
    }
  fi
  local stamp="$venv/.benchnf-installed"
  if [ ! -f "$stamp" ] || [ "$here/pyproject.toml" -nt "$stamp" ] || [ "$lock" -nt "$stamp" ]; then
    "$venv/bin/python" -m pip install --quiet --disable-pip-version-check ${constraints[@]+"${constraints[@]}"} \
      -e "$here[$extras]"
    touch "$stamp"
  fi
}

make_lock() {
  # A throw-away environment with the newest releases that pyproject.toml allows; their exact versions
  # become the lock (benchnf itself left out).
  local tmp
  tmp="$(mktemp -d)"
  "$python" -m venv "$tmp/venv"
  "$tmp/venv/bin/python" -m pip install --quiet --disable-pip-version-check "$here[$extras]"
  {
    echo "# The development environment's exact versions, installed by ./dev.sh (pip install -c this file)."
    echo "# Made by './dev.sh lock' with $("$tmp/venv/bin/python" -V) on $(date -u +%Y-%m-%d); CI also runs the"
    echo "# suite once on the newest releases (BENCHNF_NEWEST=1 ./dev.sh test)."
    "$tmp/venv/bin/python" -m pip freeze --disable-pip-version-check --exclude-editable | grep -iv '^benchnf[= @]'
  } > "$lock.part"
  mv "$lock.part" "$lock"
  rm -rf "$tmp"
  echo "dev.sh: wrote $lock"
}

case "${1:-}" in
  demo)
    shift
    ensure_venv
    exec "$venv/bin/benchnf" demo "$@"
    ;;
  test)
    shift
    ensure_venv
    cd "$here"
    "$venv/bin/ruff" check --quiet . || { echo "dev.sh: ruff found problems (above)" >&2; exit 1; }
    "$venv/bin/mypy" --no-error-summary || { echo "dev.sh: mypy found type errors (above)" >&2; exit 1; }
    set +e
    "$venv/bin/python" -m pytest "$@"
    rc=$?
    set -e
    if [ "$rc" -eq 5 ]; then
      echo "dev.sh: pytest collected no tests; that is a failure here (the suite is never empty)" >&2
      exit 1
    fi
    exit "$rc"
    ;;
  lock)
    make_lock
    ;;
  *)
    echo "usage: ./dev.sh demo | ./dev.sh test [pytest options] | ./dev.sh lock" >&2
    exit 2
    ;;
esac
