"""Installing a new version over an old one, in the same Blender session, runs the new code.

Blender imports an extension's package afresh when it is installed again, but
Python would hand the new package the old version's submodules still held in
``sys.modules``. Two builds of the same zip are made (the second with a marker
appended to the module the write operator lives in, and to the Blender base),
then installed one over the other, alternately, 20 times: after each install
the operator that runs is the installed build's, no module object of an
earlier build is still loaded, and after the last uninstall nothing of
leapwright's is registered.
"""

import os
import sys
import tempfile
import zipfile

import bpy
import pytest

import conftest
from test_install_cycles import disable, enable, install, leftovers, no_install, uninstall  # noqa: F401

CYCLES = 20
MODULE = conftest.MODULE
MARKED = ("plan/operators.py", "blender/ownership.py")


def _second_build():
    """A copy of the zip whose marked modules say ``BUILD = 'second'``."""
    src = os.environ["LW_TEST_ZIP"]
    out = os.path.join(tempfile.mkdtemp(prefix="lw-upgrade-"), os.path.basename(src))
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as zout:
        names = zin.namelist()
        for name in names:
            data = zin.read(name)
            if name.endswith(MARKED):
                data += b"\nBUILD = 'second'\n"
            zout.writestr(zin.getinfo(name), data)
    return out


def _running_build():
    """The build of the code that runs: the write operator's module, and the ownership module it calls."""
    cls = bpy.types.LEAPWRIGHT_OT_write_plan
    op_module = sys.modules[cls.__module__]
    own = sys.modules[MODULE + ".blender.ownership"]
    return getattr(op_module, "BUILD", "first"), getattr(own, "BUILD", "first")


def _loaded_modules():
    return [m for name, m in sys.modules.items() if name.startswith(MODULE + ".")]


def test_installing_a_new_build_over_the_old_runs_the_new_code(no_install, monkeypatch):  # noqa: F811
    first = os.environ["LW_TEST_ZIP"]
    second = _second_build()
    earlier = []  # kept alive, so that no new module can take an old one's id()
    for n in range(CYCLES):
        build = ("first", "second")[n % 2]
        monkeypatch.setenv("LW_TEST_ZIP", first if build == "first" else second)
        install()
        enable()
        assert _running_build() == (build, build), n
        now = _loaded_modules()
        assert len(now) > 20, n
        old = {id(m) for m in earlier}
        assert not [m.__name__ for m in now if id(m) in old], f"cycle {n}: modules of an earlier build still loaded"
        earlier += now
        disable()
        assert not [m for m in sys.modules if m.startswith(MODULE + ".")], n
        uninstall()
        assert leftovers() == [], n
    monkeypatch.setenv("LW_TEST_ZIP", first)
    install()
    enable()  # left installed and enabled, as the next module expects
    assert conftest.enabled()


@pytest.mark.parametrize("build", ["first", "second"])
def test_the_installed_build_writes_and_removes_a_jump(build, no_install):  # noqa: F811
    from rig_builder import build_rig, configure
    path = os.environ["LW_TEST_ZIP"] if build == "first" else _second_build()
    os.environ["LW_TEST_ZIP"], old = path, os.environ["LW_TEST_ZIP"]
    try:
        install()
        enable()
        rig = build_rig()
        configure(rig, height=0.4)
        bpy.context.view_layer.objects.active = rig
        assert bpy.ops.leapwright.write_plan() == {"FINISHED"}
        assert _running_build()[0] == build
        assert bpy.ops.leapwright.remove_plan() == {"FINISHED"}
        assert "lw_state" not in rig
    finally:
        os.environ["LW_TEST_ZIP"] = old
    if build == "second":
        disable()
        uninstall()
        install()
        enable()
