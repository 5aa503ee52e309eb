"""Build the Blender extension zip: ``dist/leapwright-<version>.zip``.

The package is staged in a temporary directory (``addon/`` plus a copy of
``core/`` as its ``core`` subpackage), then built with the extension builder
that ships inside the installed ``bpy`` wheel, so the zip is exactly what
Blender's own "Build Extension" would produce. Nothing is written into the
source tree besides the output directory.

Usage::

    python tools/build_extension.py --out dist
"""

import argparse
import glob
import importlib.util
import os
import re
import shutil
import subprocess
import sys
import tempfile

REPO = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
IGNORED = shutil.ignore_patterns("__pycache__", "*.pyc", ".*")


def find_builder():
    """Path of ``blender_ext.py`` inside the bpy wheel of this interpreter."""
    spec = importlib.util.find_spec("bpy")
    if spec is None or not spec.submodule_search_locations:
        sys.exit("bpy is not installed in this interpreter; run `make setup` first")
    base = list(spec.submodule_search_locations)[0]
    hits = sorted(glob.glob(os.path.join(base, "*", "scripts", "addons_core", "bl_pkg", "cli", "blender_ext.py")))
    if not hits:
        sys.exit(f"no extension builder (blender_ext.py) found under {base}")
    return hits[-1]


def manifest_version(path):
    """The ``version = "..."`` value of a TOML file (the first one, top level)."""
    with open(path, encoding="utf-8") as f:
        for line in f:
            m = re.match(r'\s*version\s*=\s*"([^"]+)"', line)
            if m:
                return m.group(1)
    sys.exit(f"no version in {path}")


def stage(tmp):
    """Copy addon/ and core/ into a staging package directory; return its path."""
    pkg = os.path.join(tmp, "leapwright")
    shutil.copytree(os.path.join(REPO, "addon"), pkg, ignore=IGNORED)
    if os.path.exists(os.path.join(pkg, "core")):
        sys.exit("addon/core exists: the core is vendored at build time, remove it from addon/")
    shutil.copytree(os.path.join(REPO, "core"), os.path.join(pkg, "core"), ignore=IGNORED)
    return pkg


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", default="dist", help="output directory (default: dist)")
    args = ap.parse_args(argv)

    version = manifest_version(os.path.join(REPO, "addon", "blender_manifest.toml"))
    project = manifest_version(os.path.join(REPO, "pyproject.toml"))
    if version != project:
        sys.exit(f"addon/blender_manifest.toml version {version} differs from pyproject.toml {project}; make them equal")

    out_dir = os.path.abspath(os.path.join(REPO, args.out) if not os.path.isabs(args.out) else args.out)
    os.makedirs(out_dir, exist_ok=True)
    out = os.path.join(out_dir, f"leapwright-{version}.zip")
    builder = find_builder()
    with tempfile.TemporaryDirectory(prefix="lw-build-") as tmp:
        pkg = stage(tmp)
        cmd = [sys.executable, builder, "build", "--source-dir", pkg, "--output-filepath", out]
        res = subprocess.run(cmd, capture_output=True, text=True)
        sys.stdout.write(res.stdout)
        sys.stderr.write(res.stderr)
        if res.returncode != 0:
            sys.exit(f"extension build failed ({res.returncode})")
    print(out)
    return 0


if __name__ == "__main__":
    sys.exit(main())
