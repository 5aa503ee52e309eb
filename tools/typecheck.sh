#!/usr/bin/env bash
# Static type check: core/ with mypy in the main .venv; the extension (addon/ +
# vendored core, staged as it ships) against fake-bpy-module in .venv-typing.
# The stub package installs a module called `bpy`, so it gets an environment of
# its own and never shares one with the real bpy.
#
# Usage: tools/typecheck.sh          (from anywhere; sets .venv-typing up if missing)
# Stubs: fake-bpy-module-4-5 is the API of Blender 4.5 LTS, the one release that
# has both sides of addon/blender_compat.py: `Action.fcurves` (4.2) and layered
# actions with slots (4.4+). The 4-2 stubs lack `Action.layers`, the 5.x stubs
# lack `Action.fcurves`.
set -euo pipefail
REPO="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$REPO"
MYPY_VERSION="${MYPY_VERSION:-2.4.1}"
STUBS="${STUBS:-fake-bpy-module-4-5==20260730}"
TYPING_VENV="${TYPING_VENV:-.venv-typing}"
PY311="${PY311:-$(command -v python3.11 || true)}"

status=0
echo "== core/ (mypy in .venv)"
.venv/bin/python -m mypy --version >/dev/null 2>&1 || .venv/bin/python -m pip install -q "mypy==$MYPY_VERSION"
.venv/bin/python -m mypy --config-file tools/mypy-core.ini core/ || status=1

echo "== addon/ (mypy + $STUBS in $TYPING_VENV)"
if [ ! -x "$TYPING_VENV/bin/python" ]; then
  [ -n "$PY311" ] || { echo "python3.11 not found; set PY311=/path/to/python3.11"; exit 2; }
  "$PY311" -m venv "$TYPING_VENV"
fi
"$TYPING_VENV/bin/python" -c "import mypy, numpy" 2>/dev/null && "$TYPING_VENV/bin/python" -m pip show -q "${STUBS%%==*}" >/dev/null 2>&1 \
  || "$TYPING_VENV/bin/python" -m pip install -q "mypy==$MYPY_VERSION" "$STUBS" "numpy"
if "$TYPING_VENV/bin/python" -c "import bpy; bpy.app.version" >/dev/null 2>&1; then
  echo "$TYPING_VENV holds a real bpy; the stubs must live alone"; exit 2
fi
stage="$(mktemp -d)"
trap 'rm -rf "$stage"' EXIT
cp -r addon "$stage/leapwright"
rm -rf "$stage/leapwright/core" && cp -r core "$stage/leapwright/core"
find "$stage" -name __pycache__ -prune -exec rm -rf {} +
(cd "$stage" && "$REPO/$TYPING_VENV/bin/python" -m mypy --config-file "$REPO/tools/mypy-addon.ini" \
   --cache-dir "$stage/.mypy_cache" -p leapwright) || status=1
exit $status
