#!/usr/bin/env bash
# The project's two commands, for a fresh Debian machine with Python 3.11:
#   ./tasks.sh demo   make .venv, install sheetbuilder, build the demo workbook (demo_workbook.xlsx),
#                     then print the commands to run on your own exports
#   ./tasks.sh test   the same install with the test tools, LibreOffice Calc and Gnumeric if missing, then every test
# Also: ./tasks.sh samples (PNG renders and the demo workbook into output_samples/),
#       ./tasks.sh golden (output_samples/demo.xlsx only, the golden file of tests/test_golden_demo.py),
#       ./tasks.sh bench (the benchmark, benchmarks/), ./tasks.sh soak (the long fuzz soak of the readers),
#       ./tasks.sh study (the simulated-market study of the bid method; writes study/results.md),
#       ./tasks.sh largest (the largest benchmark account built, saved by LibreOffice and read back; about an hour).
set -euo pipefail
cd "$(dirname "$0")"
PY=${PYTHON:-python3}
VENV=.venv

as_root() { if [ "$(id -u)" = 0 ]; then "$@"; elif command -v sudo >/dev/null; then sudo "$@"; else return 1; fi; }

apt_install() {
  as_root apt-get update -qq && DEBIAN_FRONTEND=noninteractive as_root apt-get install -y -qq --no-install-recommends "$@"
}

venv() {
  local extra=$1
  if [ ! -x "$VENV/bin/python" ]; then
    "$PY" -m venv "$VENV" 2>/dev/null || { apt_install python3-venv && "$PY" -m venv "$VENV"; }
  fi
  local stamp="$VENV/.installed-$extra"
  if [ ! -f "$stamp" ] || [ pyproject.toml -nt "$stamp" ]; then
    "$VENV/bin/python" -m pip install -q --disable-pip-version-check -e ".[$extra]"
    touch "$stamp"
  fi
}

libreoffice() {
  if ! command -v soffice >/dev/null; then
    echo "Installing LibreOffice Calc (headless) for the recalculation tests..."
    apt_install libreoffice-calc-nogui poppler-utils fonts-dejavu-core \
      || apt_install libreoffice-calc poppler-utils fonts-dejavu-core \
      || { echo "LibreOffice Calc is missing and could not be installed: apt-get install libreoffice-calc"; exit 1; }
  fi
  if ! command -v pdftoppm >/dev/null; then apt_install poppler-utils || true; fi
  if ! /usr/bin/python3 -c "import uno" 2>/dev/null; then  # the UNO tests drive LibreOffice as a person would
    apt_install python3-uno || { echo "python3-uno is missing and could not be installed: apt-get install python3-uno"; exit 1; }
  fi
}

gnumeric() {
  if ! command -v ssconvert >/dev/null; then
    echo "Installing Gnumeric (ssconvert) for the third recalculation engine..."
    apt_install gnumeric \
      || { echo "Gnumeric is missing and could not be installed: apt-get install gnumeric"; exit 1; }
  fi
}

case "${1:-}" in
  demo)
    venv run
    "$VENV/bin/sheetbuilder" build demo_inputs -o demo_workbook.xlsx --force
    here=$(printf '%q' "$(pwd)")
    cat <<EOF

The demo workbook is $here/demo_workbook.xlsx: open it in any spreadsheet program.

To build a workbook from your own exports, put them in one folder and run
(YOUR_EXPORTS_FOLDER is that folder's path):
  $here/$VENV/bin/sheetbuilder inspect YOUR_EXPORTS_FOLDER
  $here/$VENV/bin/sheetbuilder build YOUR_EXPORTS_FOLDER -o my_workbook.xlsx

To type just "sheetbuilder" instead of the full path, either put it on your PATH
(add the line to ~/.bashrc to keep it):
  export PATH="$here/$VENV/bin:\$PATH"
or install it for your user with pipx:
  pipx install $here
EOF
    ;;
  test)
    venv test
    libreoffice
    gnumeric
    shift
    "$VENV/bin/python" -m pytest -q -p no:cacheprovider "$@"
    ;;
  samples)
    venv test
    libreoffice
    "$VENV/bin/python" tools/render_samples.py demo_inputs output_samples
    ;;
  golden)
    venv run
    "$VENV/bin/python" tools/render_samples.py demo_inputs output_samples --workbook-only
    ;;
  bench)
    venv test
    libreoffice
    shift
    "$VENV/bin/python" -m benchmarks.bench "$@"
    ;;
  soak)
    venv test
    shift
    "$VENV/bin/python" -m benchmarks.soak "$@"
    ;;
  largest)
    venv test
    libreoffice
    shift
    SB_LARGEST=1 "$VENV/bin/python" -m pytest -q -p no:cacheprovider tests/test_largest_account.py "$@"
    ;;
  study)
    venv test
    shift
    "$VENV/bin/python" -m study.run_study "$@"
    ;;
  *)
    echo "usage: ./tasks.sh demo | test | samples | golden | bench | soak | study"; exit 2
    ;;
esac
