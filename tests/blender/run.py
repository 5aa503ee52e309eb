"""Run the real-Blender tests against a built extension zip.

Usage::

    <venv>/bin/python tests/blender/run.py --zip dist/leapwright-<version>.zip

Blender's state is one per process, and a process that exits with add-on
classes registered crashes on some versions, so every test module runs in its
own pytest subprocess (see conftest.py for the clean exit). The first module,
``test_install.py``, installs the zip into a fresh user directory the way a
user would; the rest enable the installed copy. The last line sums them up.
"""

import argparse
import glob
import os
import subprocess
import sys
import tempfile
import time
import xml.etree.ElementTree as ET

HERE = os.path.dirname(os.path.abspath(__file__))
FIRST = "test_install.py"


def counts(junit_path):
    """(passed, failed, skipped) from a pytest junit xml file."""
    if not os.path.exists(junit_path):
        return 0, 0, 0
    root = ET.parse(junit_path).getroot()
    suites = [root] if root.tag == "testsuite" else list(root)
    tests = fail = skip = 0
    for s in suites:
        tests += int(s.get("tests", 0))
        fail += int(s.get("failures", 0)) + int(s.get("errors", 0))
        skip += int(s.get("skipped", 0))
    return tests - fail - skip, fail, skip


def main(argv=None):
    ap = argparse.ArgumentParser(description="real-Blender integration tests")
    ap.add_argument("--zip", required=True, help="the built extension zip")
    ap.add_argument("-k", default=None, help="pytest -k expression, passed through")
    ap.add_argument("modules", nargs="*", help="test module names (default: all)")
    args = ap.parse_args(argv)
    zip_path = os.path.abspath(args.zip)
    if not os.path.isfile(zip_path):
        sys.exit(f"no such zip: {zip_path}; run `make build` first")

    names = args.modules or sorted(os.path.basename(p) for p in glob.glob(os.path.join(HERE, "test_*.py")))
    names = sorted(names, key=lambda n: (n != FIRST, n))
    if names[0] != FIRST:
        names.insert(0, FIRST)

    total = [0, 0, 0]
    bad_exit = []
    started = time.monotonic()
    with tempfile.TemporaryDirectory(prefix="lw-blender-") as tmp:
        env = dict(os.environ)
        for var, sub in (("BLENDER_USER_RESOURCES", "user"), ("HOME", "home"), ("XDG_CACHE_HOME", "cache")):
            os.makedirs(os.path.join(tmp, sub), exist_ok=True)
            env[var] = os.path.join(tmp, sub)
        env["LW_TEST_ZIP"] = zip_path
        env["PYTHONDONTWRITEBYTECODE"] = "1"
        for name in names:
            junit = os.path.join(tmp, name + ".xml")
            cmd = [sys.executable, "-m", "pytest", os.path.join(HERE, name), "-q", "-p", "no:cacheprovider",
                   "--rootdir", HERE, "-c", os.path.join(HERE, "pytest.ini"), f"--junitxml={junit}"]
            if args.k:
                cmd += ["-k", args.k]
            print(f"== {name}", flush=True)
            res = subprocess.run(cmd, env=env, cwd=HERE)
            p, f, s = counts(junit)
            total = [total[0] + p, total[1] + f, total[2] + s]
            if res.returncode != 0 and f == 0:
                bad_exit.append(f"{name} (exit {res.returncode})")
    took = time.monotonic() - started
    line = f"{total[0]} passed, {total[1]} failed, {total[2]} skipped in {took:.1f}s"
    if bad_exit:
        line += "; bad exit: " + ", ".join(bad_exit)
    print(line)
    return 1 if (total[1] or bad_exit or total[0] == 0) else 0


if __name__ == "__main__":
    sys.exit(main())
