"""The fault matrix: every operator that writes, against every fault, changes nothing.

Each case puts one fault in an otherwise good file (a rig linked from a
library or overridden, edit mode, a damaged leapwright record, a setting that
is not a number, a frame beyond Blender's frames), hashes every F-curve, NLA
track, marker and custom property (:func:`scene_probe.file_state`, key
attributes as raw bytes), runs one operator, and expects a refusal in the
animator's words (the RuntimeError ``bpy.ops`` raises for an ERROR report, or
the poll's message) and the same hash after. All cases share one Blender process.
"""

import hashlib
import os
import signal
import subprocess
import sys
import tempfile
import time
import zipfile

import bpy
import pytest

from rig_builder import add_user_keys, build_rig, configure
from scene_probe import addon, file_state

#: Operator id and arguments: every leapwright operator that can write (checked against the registered ones).
WRITERS = (
    ("write_plan", {"on_conflict": "REPLACE"}), ("remove_plan", {}), ("use_active_bone", {}), ("find_rig_controls", {}),
    ("check_export", {"snap_keys": True}), ("split_clips", {}),
    ("bake_follow_through", {"bones": "spine"}), ("remove_follow_through", {}), ("describe_chain", {}),
    ("keep_body_on_arc", {}), ("remove_body_arc", {}), ("edit_body_map", {}),
    ("check_jump", {}), ("go_to_finding", {}), ("clear_check", {}),
    ("find_arm_bones", {}), ("place_arm_swing", {}), ("retime_arm_swing", {}), ("remove_arm_swing", {}),
)

#: Operators that only fill in leapwright's settings (``lw_settings_only``): refused in edit mode only,
#: since they write nothing on the rig (a linked rig may be chosen, its arms found, a finding gone to).
SETTINGS_ONLY = ("use_active_bone", "go_to_finding", "find_arm_bones")

_LIBRARY = {}


def state_hash():
    """SHA-256 of everything animation-related in the file (see :func:`scene_probe.file_state`)."""
    return hashlib.sha256(repr(file_state()).encode()).hexdigest()


def _library():
    if "path" not in _LIBRARY:
        rig = build_rig()
        add_user_keys(rig)
        path = os.path.join(tempfile.mkdtemp(prefix="lw-matrix-"), "character.blend")
        bpy.data.libraries.write(path, {rig}, fake_user=True)
        _LIBRARY["path"] = path
        bpy.ops.wm.read_factory_settings(use_empty=True)
        import conftest
        conftest.install_or_enable()
    return _LIBRARY["path"]


def _linked():
    path = _library()
    with bpy.data.libraries.load(path, link=True) as (_src, dst):
        dst.objects = ["Rig"]
    rig = dst.objects[0]
    bpy.context.scene.collection.objects.link(rig)
    return rig


def _local():
    rig = build_rig()
    add_user_keys(rig)
    return rig


def _damaged(text, on_action=False):
    def make():
        rig = _local()
        if on_action:
            rig.animation_data.action["lw_writes"] = text
        else:
            rig["lw_state"] = text
        return rig
    return make


def _setting(group, name, value):
    def make():
        rig = _local()
        setattr(getattr(bpy.context.scene, group), name, value)
        return rig
    return make


def _edit_mode():
    rig = _local()
    bpy.context.view_layer.objects.active = rig
    bpy.ops.object.mode_set(mode="EDIT")
    return rig


#: Fault name -> (make the rig with the fault, what the refusal must say).
FAULTS = {
    "linked rig": (_linked, "linked"),
    "overridden rig": (lambda: _linked().override_create(remap_local_usages=True), "override"),
    "record not readable": (_damaged("{'layers': oops"), "damaged"),
    "record of another shape": (_damaged("[1, 2, 3]"), "damaged"),
    "record entry of the wrong form": (_damaged('{"layers": 5}'), "damaged"),
    "action record damaged": (_damaged("[{}]", on_action=True), "damaged"),
    "height not a number": (_setting("leapwright_plan", "height", float("nan")), "not a number"),
    "start frame beyond Blender": (_setting("leapwright_plan", "start_frame", 2**31 - 1), "beyond the frames"),
    "edit mode": (_edit_mode, "edit mode"),
}


def _prepare(fault):
    make, _match = FAULTS[fault]
    rig = make()
    configure(rig, height=0.4) if fault != "height not a number" else None
    if fault == "height not a number":
        s = bpy.context.scene.leapwright_plan
        s.rig, s.com_bone = rig, "hips"
    bpy.context.view_layer.objects.active = rig
    bpy.context.scene.leapwright_follow_through.source = "SELECTED"
    return rig


@pytest.mark.parametrize("fault", sorted(FAULTS))
@pytest.mark.parametrize("op,kwargs", WRITERS, ids=[w[0] for w in WRITERS])
def test_refused_with_nothing_changed(op, kwargs, fault):
    _prepare(fault)
    before = state_hash()
    if op in SETTINGS_ONLY and fault != "edit mode":
        try:  # runs (or refuses for a reason of its own, never the fault), and the file's data stays as it was
            getattr(bpy.ops.leapwright, op)(**kwargs)
        except RuntimeError as exc:
            assert "Traceback" not in str(exc) and FAULTS[fault][1] not in str(exc), str(exc)
        assert state_hash() == before
        return
    with pytest.raises(RuntimeError) as info:
        getattr(bpy.ops.leapwright, op)(**kwargs)
    message = str(info.value)
    # refused by the guard in the animator's words, or before it by the operator's own poll (button greyed out)
    assert FAULTS[fault][1] in message or "poll() failed" in message, message
    assert "Traceback" not in message
    assert state_hash() == before


def test_the_matrix_covers_every_registered_writer_and_each_goes_through_the_guard():
    guard = addon().blender.write_guard
    registered = {getattr(bpy.types, n) for n in dir(bpy.types) if n.startswith("LEAPWRIGHT_OT_")}
    writers = {c.bl_idname.split(".", 1)[1] for c in registered if guard.writes(c)}
    assert writers == {w[0] for w in WRITERS}
    for cls in registered:
        if not guard.writes(cls):
            continue
        for name in ("execute", "invoke"):
            method = getattr(cls, name, None)
            if method is not None:
                assert getattr(method, guard.GUARD_ATTRIBUTE, False), f"{cls.bl_idname}.{name} is not guarded"


#: The operators Blender keeps no undo step for: they read the rig and report, and must change nothing.
READERS = ("check_body_arc", "check_arm_swing")


@pytest.mark.parametrize("op", READERS)
@pytest.mark.parametrize("fault", [None, "linked rig", "record not readable"])
def test_the_operators_that_only_read_change_nothing(op, fault):
    guard = addon().blender.write_guard
    registered = {getattr(bpy.types, n) for n in dir(bpy.types) if n.startswith("LEAPWRIGHT_OT_")}
    assert {c.bl_idname.split(".", 1)[1] for c in registered if not guard.writes(c)} == set(READERS)
    if fault is None:
        rig = _local()
        configure(rig, height=0.4)
        bpy.context.view_layer.objects.active = rig
        assert bpy.ops.leapwright.write_plan(on_conflict="LAYER") == {"FINISHED"}
    else:
        _prepare(fault)
    before = state_hash()
    try:
        getattr(bpy.ops.leapwright, op)()
    except RuntimeError as exc:  # a reader may refuse (no arm bones chosen, say); it must not write
        assert "Traceback" not in str(exc)
    assert state_hash() == before


# --- SIGKILL during the command-line bake: the original or the whole result, never a torn file ----

REPO = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
KILL_POINTS = 8


def _cli():
    """The command line of this checkout on this Blender (the test's own interpreter), running the built
    extension's package as ``leapwright`` (unpacked: the zip holds the add-on with its core), so it
    needs no install in this environment."""
    root = tempfile.mkdtemp(prefix="lw-pkg-")
    with zipfile.ZipFile(os.environ["LW_TEST_ZIP"]) as zf:
        zf.extractall(os.path.join(root, "leapwright"))
    return [sys.executable, "-m", "cli.main"], REPO, os.pathsep.join([root, REPO])


def _shot_file():
    from test_follow_through import _jumping_rig
    _jumping_rig()
    path = os.path.join(tempfile.mkdtemp(prefix="lw-kill-"), "shot.blend")
    bpy.ops.wm.save_as_mainfile(filepath=path)
    with open(path, "rb") as fh:
        return path, fh.read()


def _baked(path):
    """Whether the file at ``path`` opens and holds the whole bake (its layer and its record)."""
    bpy.ops.wm.open_mainfile(filepath=path)
    rig = next(o for o in bpy.data.objects if o.type == "ARMATURE")
    state = rig.get("lw_state")
    tracks = [s.action for t in rig.animation_data.nla_tracks for s in t.strips
              if s.action is not None and s.action.get("lw_layer") == "follow_through"]
    return bool(state) and "follow_through" in state and len(tracks) == 1


def test_sigkill_during_the_command_line_bake_leaves_the_original_or_the_whole_result():
    path, original = _shot_file()
    cmd, cwd, pythonpath = _cli()
    cmd = cmd + ["follow-through", path, "--bones", "pony.1,pony.2,pony.3"]
    started = time.monotonic()
    env = dict(os.environ, PYTHONPATH=pythonpath)
    done = subprocess.run(cmd, cwd=cwd, capture_output=True, text=True, timeout=300, env=env)
    whole = time.monotonic() - started
    assert done.returncode == 0, done.stderr
    assert _baked(path)
    seen = set()
    for k in range(1, KILL_POINTS + 1):
        with open(path, "wb") as fh:
            fh.write(original)
        proc = subprocess.Popen(cmd, cwd=cwd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env)
        time.sleep(whole * k / (KILL_POINTS + 1))
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        with open(path, "rb") as fh:
            now = fh.read()
        if now == original:
            seen.add("original")
        else:
            assert _baked(path), f"kill point {k}/{KILL_POINTS + 1}: the file is neither the original nor whole"
            seen.add("baked")
        assert os.path.basename(path) in os.listdir(os.path.dirname(path))
    assert "original" in seen  # the early kill points land before the save

