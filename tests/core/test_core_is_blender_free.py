"""The core never imports Blender: it must run where bpy and mathutils do not exist."""

import pathlib
import re
import subprocess
import sys

CORE = pathlib.Path(__file__).resolve().parents[2] / "core"
ROOT = CORE.parent


def test_no_blender_imports_in_core_sources():
    pattern = re.compile(r"^\s*(import|from)\s+(bpy|mathutils|bmesh|gpu|bl_\w+)\b", re.M)
    offenders = [p.name for p in CORE.rglob("*.py") if pattern.search(p.read_text())]
    assert offenders == []


def test_core_imports_with_blender_modules_blocked():
    code = (
        "import sys, importlib, pkgutil\n"
        "for name in ('bpy', 'mathutils', 'bmesh', 'gpu'):\n"
        "    sys.modules[name] = None\n"
        "import core\n"
        "for m in pkgutil.iter_modules(core.__path__):\n"
        "    importlib.import_module('core.' + m.name)\n"
        "print('ok')\n"
    )
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "ok"


def test_core_uses_only_relative_imports_among_its_modules():
    absolute = re.compile(r"^\s*(from|import)\s+core\b", re.M)
    offenders = [p.name for p in CORE.rglob("*.py") if absolute.search(p.read_text())]
    assert offenders == []
