#!/usr/bin/env bash
# Set-up and entry point for a fresh machine: creates .venv on first use, installs benchnf
# into it (again whenever pyproject.toml changes), then runs the demo or the test suite.
#   ./dev.sh demo [benchnf demo options]   analyse the shipped demo captures
#   ./dev.sh test [pytest options]         run the whole test suite
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
venv="${BENCHNF_VENV:-$here/.venv}"
python="${PYTHON:-python3}"

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
  if [ ! -f "$stamp" ] || [ "$here/pyproject.toml" -nt "$stamp" ]; then
    "$venv/bin/python" -m pip install --quiet --disable-pip-version-check -e "$here[test,fast,desk]"
    touch "$stamp"
  fi
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
  *)
    echo "usage: ./dev.sh demo | ./dev.sh test [pytest options]" >&2
    exit 2
    ;;
esac
