"""The project's shape, enforced: one package per capability, who may import whom, no cycles,
the core free of Blender in every subpackage, and no file or function too long to read.

The rules (DEVELOPERS.md draws them):

* ``core/base`` imports nothing else of the project; ``addon/blender`` (the add-on's Blender
  base) imports only itself and ``core/base``.
* A capability package imports the bases, itself, and only what its ``__init__`` docstring
  names on its ``May import:`` line (``core/<c>`` names core packages; ``addon/<c>`` names
  add-on packages and ``core.<c>`` packages).
* The core never imports the add-on or the command line; the add-on never imports the command line.
* No import cycles between modules (function-level imports count) in core/, addon/, cli/ and
  blend_examples/, and none between the declared packages.
* No tracked Python file over 400 lines, no function over 80 lines.
"""

import ast
import pathlib
import re
import subprocess
import sys
import tomllib

import pytest

ROOT = pathlib.Path(__file__).resolve().parents[2]
TREES = ("core", "addon", "cli", "blend_examples")
MAX_FILE_LINES = 400
MAX_FUNCTION_LINES = 80


def _module_name(path):
    """The import name of a project file (core/ is ``leapwright.core``, addon/ is ``leapwright``)."""
    rel = path.relative_to(ROOT).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    if parts[0] == "core":
        return ".".join(["leapwright", "core"] + parts[1:])
    if parts[0] == "addon":
        return ".".join(["leapwright"] + parts[1:])
    if parts[0] == "blend_examples":  # scripts importing their siblings by bare name
        return parts[-1]
    return ".".join(parts)


def _project_files():
    files = {}
    for tree in TREES:
        for path in sorted((ROOT / tree).rglob("*.py")):
            if "__pycache__" not in path.parts and "out" not in path.relative_to(ROOT).parts:
                files[_module_name(path)] = path
    return files


FILES = _project_files()


def _imports(name, path):
    """Project modules that ``name`` imports anywhere in its file (function-level included)."""
    is_package = path.name == "__init__.py"
    found = set()
    for node in ast.walk(ast.parse(path.read_text(), str(path))):
        if isinstance(node, ast.Import):
            targets = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = name.split(".") if is_package else name.split(".")[:-1]
                base = base[:len(base) - node.level + 1]
                module = ".".join(base + ([node.module] if node.module else []))
            else:
                module = node.module
            targets = [f"{module}.{a.name}" for a in node.names] + [module]
        else:
            continue
        for target in targets:
            while target and target not in FILES:
                target = target.rpartition(".")[0]
            if target and target != name:
                found.add(target)
    # Importing ``a.b.c`` runs ``a/__init__`` and ``a/b/__init__`` too; those are not edges we judge.
    return {t for t in found if not name.startswith(t + ".")}


GRAPH = {name: _imports(name, path) for name, path in FILES.items()}


def _package(name):
    """(layer, package) of a module: ('core', 'plan'), ('addon', 'blender'), ('cli', None) ..."""
    parts = name.split(".")
    if parts[0] != "leapwright":
        return (parts[0] if parts[0] == "cli" else "blend_examples"), None
    if len(parts) > 1 and parts[1] == "core":
        return "core", parts[2] if len(parts) > 2 else None
    return "addon", parts[1] if len(parts) > 1 else None


def _allowed(layer, package):
    """What a package's docstring lets it import, as (layer, package) pairs."""
    folder = ROOT / ("core" if layer == "core" else "addon") / package
    doc = ast.get_docstring(ast.parse((folder / "__init__.py").read_text())) or ""
    match = re.search(r"^May import:\s*(.*)$", doc, re.M)
    assert match, f"{folder}/__init__.py: its docstring needs a 'May import:' line"
    allowed = {(layer, package)}
    named = "" if match.group(1).strip().startswith("nothing") else match.group(1)
    for word in re.split(r"[,\s]+", named.strip()):
        if not word:
            continue
        if word.startswith("core."):
            allowed.add(("core", word[5:]))
        else:
            allowed.add((layer, word))
    return allowed


def _capability_packages():
    for layer in ("core", "addon"):
        for folder in sorted((ROOT / layer).iterdir()):
            if (folder / "__init__.py").exists():
                yield layer, folder.name


PACKAGES = list(_capability_packages())


@pytest.mark.parametrize("layer,package", PACKAGES, ids=[f"{l}/{p}" for l, p in PACKAGES])
def test_each_package_imports_only_what_its_docstring_names(layer, package):
    allowed = _allowed(layer, package)
    if layer == "core" and package != "base":
        allowed.add(("core", "base"))
    if layer == "addon" and package != "blender":
        allowed |= {("addon", "blender"), ("core", "base")}
    if (layer, package) == ("addon", "blender"):
        assert allowed <= {("addon", "blender"), ("core", "base")}, "the Blender base may use only core.base"
    if (layer, package) == ("core", "base"):
        assert allowed == {("core", "base")}, "core.base imports nothing else of the project"
    broken = []
    for name, targets in GRAPH.items():
        if _package(name) != (layer, package):
            continue
        for target in sorted(targets):
            where = _package(target)
            if where[1] is None and where[0] in ("core", "addon"):
                where = (where[0], "")  # the package roots: leapwright, leapwright.core
            if where not in allowed and where not in {("core", "")}:
                broken.append(f"{name} imports {target}")
    assert broken == [], f"{layer}/{package} may import {sorted(allowed)}"


def test_core_never_imports_the_addon_or_the_command_line():
    broken = [f"{n} -> {t}" for n, ts in GRAPH.items() for t in ts
              if _package(n)[0] == "core" and _package(t)[0] != "core"]
    broken += [f"{n} -> {t}" for n, ts in GRAPH.items() for t in ts
               if _package(n)[0] == "addon" and _package(t)[0] in ("cli", "blend_examples")]
    assert broken == []


def _cycle(graph):
    """One cycle of ``graph`` as a list of nodes, or None."""
    colour, stack = {}, []

    def visit(node):
        colour[node] = 1
        stack.append(node)
        for nxt in sorted(graph.get(node, ())):
            if colour.get(nxt) == 1:
                return stack[stack.index(nxt):] + [nxt]
            if colour.get(nxt) is None and (found := visit(nxt)):
                return found
        colour[node] = 2
        stack.pop()
        return None

    for node in sorted(graph):
        if colour.get(node) is None and (found := visit(node)):
            return found
    return None


def test_no_import_cycles_between_modules():
    assert _cycle(GRAPH) is None


def test_no_cycles_between_declared_packages():
    declared = {(l, p): _allowed(l, p) - {(l, p)} for l, p in PACKAGES}
    assert _cycle(declared) is None


def test_the_cycle_finder_finds_a_cycle():
    # The rule above is only as good as the search: a known cycle must be reported.
    assert _cycle({"a": {"b"}, "b": {"c"}, "c": {"a"}}) == ["a", "b", "c", "a"]
    assert _cycle({"a": {"b"}, "b": set()}) is None


def test_core_has_no_blender_imports_in_any_subpackage():
    pattern = re.compile(r"^\s*(import|from)\s+(bpy|mathutils|bmesh|gpu|bl_\w+|addon_utils)\b", re.M)
    offenders = [str(p.relative_to(ROOT)) for p in (ROOT / "core").rglob("*.py") if pattern.search(p.read_text())]
    assert offenders == []


def test_every_core_module_imports_with_blender_blocked():
    code = (
        "import sys, importlib, pkgutil\n"
        "for name in ('bpy', 'mathutils', 'bmesh', 'gpu', 'addon_utils'):\n"
        "    sys.modules[name] = None\n"
        "import leapwright.core as core\n"
        "names = [m.name for m in pkgutil.walk_packages(core.__path__, 'leapwright.core.')]\n"
        "for n in names:\n"
        "    importlib.import_module(n)\n"
        "print(len(names))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT / "tests", capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    expected = sum(1 for n in FILES if n.startswith("leapwright.core."))
    assert int(out.stdout.strip()) == expected  # every module, subpackages included


def test_every_package_is_listed_for_installation():
    listed = set(tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]["packages"])
    packages = {n for n, p in FILES.items() if p.name == "__init__.py" and not n.startswith("blend_examples")}
    assert packages <= listed


def _tracked_python_files():
    out = subprocess.run(["git", "ls-files", "*.py"], cwd=ROOT, capture_output=True, text=True)
    if out.returncode != 0:  # not a checkout: every Python file under the trees we ship and test
        return sorted(p for d in TREES + ("tests", "bench", "tools") for p in (ROOT / d).rglob("*.py"))
    return [ROOT / line for line in out.stdout.split() if (ROOT / line).exists()]


def test_no_file_over_400_lines():
    long = {str(p.relative_to(ROOT)): n for p in _tracked_python_files()
            if (n := len(p.read_text().splitlines())) > MAX_FILE_LINES}
    assert long == {}


def test_no_function_over_80_lines():
    long = []
    for path in _tracked_python_files():
        for node in ast.walk(ast.parse(path.read_text(), str(path))):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                n = node.end_lineno - node.lineno + 1
                if n > MAX_FUNCTION_LINES:
                    long.append(f"{path.relative_to(ROOT)}:{node.lineno} {node.name} ({n} lines)")
    assert long == []
