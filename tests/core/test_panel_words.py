"""No Python API names in anything a panel user (or a command-line user) reads.

Every message the add-on can show comes from a string literal in ``core/`` (errors,
warnings, findings: they reach the panel through operator reports and readouts),
``addon/`` (reports, labels, tooltips, operator descriptions) or ``cli/`` (its text).
This test reads them all from the source and fails on anything that looks like code
rather than an animator's words: a function call or keyword recipe (``name(``,
``name=``, ``word='…'``), ``dict`` or ``kwargs``, a class name in CamelCase, a
dotted module path. Docstrings are for programmers and are skipped, except an
operator class's docstring, which Blender shows as its tooltip. The one allow-list
is for bone names of rigs we did not build (Rigify's controls: Rigify's human rig
documentation), which an animator types and reads as they are.
"""

import ast
import pathlib
import re

import pytest

ROOT = pathlib.Path(__file__).resolve().parents[2]
#: Where the text a user reads is written.
SOURCES = ("core", "addon", "cli")
#: Bone names, the only code-like words allowed: Rigify's controls and deform bones (its human
#: rig's own) and the game-style names the messages give as examples (``foot_l``, ``thigh_r``).
BONE_NAMES = re.compile(r"\b(?:DEF|MCH|ORG)-[\w.]+|\b(?:foot_ik|foot_spin_ik|foot_heel_ik|upper_arm_fk|"
                        r"upper_arm_ik|hand_ik|thigh_ik|thigh_fk|IK_FK)(?:\.[LR])?\b|"
                        r"\b(?:foot|thigh|upperarm|hand)_[lr]\b")
#: What code looks like in a sentence.
API_LOOKS = {
    "a call or keyword with an underscore name": re.compile(r"\b[A-Za-z][A-Za-z0-9]*_\w*(?:\(|\s*=)"),
    "a keyword recipe": re.compile(r"\b[a-z]\w+=['\"{(\[]"),
    "an empty call": re.compile(r"\b\w+\(\)"),
    "a Python type word": re.compile(r"\b(?:dict|kwargs?|NoneType|tuple\[|list\[)\b"),
    "a class name": re.compile(r"\b[A-Z][a-z]+[A-Z][A-Za-z]+\b"),
    "a module path": re.compile(r"\b[a-z_]+\.[a-z_]+\.[a-z_]+\b|\b(?:bpy|leapwright|core|addon|cli)\.[a-z_]"),
}
#: Proper names in the trade's literature that read like class names.
NAMES_OF_PEOPLE = {"McMahon", "McNeill", "DeLeva"}


def _text(node):
    """The literal text of a string node; an f-string's fields become ``{}``."""
    if isinstance(node, ast.Constant) and isinstance(node.value, str):
        return node.value
    if isinstance(node, ast.JoinedStr):
        return "".join(v.value if isinstance(v, ast.Constant) else "{}" for v in node.values)
    return ""


def _docstrings(tree):
    out = {}
    for n in ast.walk(tree):
        if isinstance(n, (ast.Module, ast.ClassDef, ast.FunctionDef, ast.AsyncFunctionDef)) and n.body:
            first = n.body[0]
            if isinstance(first, ast.Expr) and isinstance(first.value, ast.Constant):
                out[id(first.value)] = n
    return out


def _is_operator(cls):
    return isinstance(cls, ast.ClassDef) and any(
        isinstance(s, ast.Assign) and any(getattr(t, "id", "") == "bl_idname" for t in s.targets) for s in cls.body)


def user_texts(path):
    """``(line, text)`` of every string in ``path`` a user can read (see the module docstring)."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    docs = _docstrings(tree)
    inner = {id(v) for n in ast.walk(tree) if isinstance(n, ast.JoinedStr) for v in n.values}
    out = []
    for n in ast.walk(tree):
        if id(n) in inner or not isinstance(n, (ast.Constant, ast.JoinedStr)):
            continue
        owner = docs.get(id(n))
        if owner is not None and not _is_operator(owner):
            continue
        text = _text(n)
        if " " in text.strip():  # a sentence, not a key or an identifier
            out.append((n.lineno, text))
    return out


def code_in(text):
    """What in ``text`` looks like code, after taking out bone names; ``None`` if nothing does."""
    plain = BONE_NAMES.sub("bone", text)
    for what, pattern in API_LOOKS.items():
        for m in pattern.finditer(plain):
            if m.group(0) not in NAMES_OF_PEOPLE:
                return f"{what}: {m.group(0)!r}"
    return None


def _files():
    return sorted(p for d in SOURCES for p in (ROOT / d).rglob("*.py"))


@pytest.mark.parametrize("text,found", [
    ("give map_by_hand a dict from landmark to bone", True),
    ("for a preset pass chain_preset(name)", True),
    ("name the bones (bones='a,b,c') or pick a bone collection", True),
    ("parameters must be ChainParameters or LinkCoefficients", True),
    ("see leapwright.core.plan.goals", True),
    ("call write_plan() again", True),
    ("the keys on 'DEF-ponytail.001' do not move it: a constraint", False),
    ("use foot_ik.L and upper_arm_fk.R", False),
    ("the push-off needs 2.5 × body weight (McMahon et al. 2018); lengthen the push-off", False),
    ("g = 9.81 m/s^2 and the hip_mid point", False),
    ("e.g. thigh_l+thigh_r (a bare name means the bone's head)", False),
    ("write NAME=METRES, e.g. foot_l=0.92", False),
    ("set max_swing = 30", True),
])
def test_the_detector_tells_code_from_words(text, found):
    assert (code_in(text) is not None) == found, code_in(text)


def test_the_sources_are_read():
    texts = {p: user_texts(p) for p in _files()}
    assert len(texts) > 100 and sum(map(len, texts.values())) > 1000
    # a known report and a known core message are among them
    assert any("nothing from leapwright on" in t for p, ts in texts.items() if p.parent.name == "plan"
               for _, t in ts)
    assert any("map the bones by hand" in t for ts in texts.values() for _, t in ts)


def test_no_python_api_names_in_what_users_read():
    found = []
    for path in _files():
        for line, text in user_texts(path):
            what = code_in(text)
            if what is not None:
                found.append(f"{path.relative_to(ROOT)}:{line}: {what} in {text[:100]!r}")
    assert not found, "\n".join(found)
