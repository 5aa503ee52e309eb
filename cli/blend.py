"""Sampled paths from .blend files, with Blender as the ``bpy`` module (imported lazily).

Only the command line uses this: ``leapwright plan`` and CSV checks never need Blender.
"""

import contextlib
import os
import sys

from leapwright.core.base.constants import STANDARD_GRAVITY
from leapwright.core.base.errors import InvalidTrajectoryError


def _bpy():
    try:
        import bpy
    except ImportError:
        raise InvalidTrajectoryError(
            "checking a .blend needs Blender as the bpy module (pip install bpy: 5.1+ on Python 3.13, "
            "4.2-5.0 on Python 3.11); run it from the environment `make setup` made (.venv)") from None
    return bpy


@contextlib.contextmanager
def _blender_chatter_aside():
    """Blender prints loading and saving notes on stdout and stderr at the C level; send them nowhere.

    stdout is for reports and stderr for the one-line error: Blender's own words
    on either would come before it. Its errors still reach us as exceptions.
    """
    sys.stdout.flush()
    sys.stderr.flush()
    saved = [os.dup(1), os.dup(2)]
    devnull = os.open(os.devnull, os.O_WRONLY)
    try:
        os.dup2(devnull, 1)
        os.dup2(devnull, 2)
        yield
    finally:
        os.dup2(saved[0], 1)
        os.dup2(saved[1], 2)
        for fd in saved + [devnull]:
            os.close(fd)


def addon_module(name):
    """A module of the add-on (e.g. ``"follow_through.bake"``), with Blender imported as ``bpy``.

    The add-on is the package ``leapwright`` and its core ``leapwright.core``, as in the built
    extension, so the command line runs exactly the add-on's code with one copy of the core.
    """
    import importlib

    _bpy()
    return importlib.import_module(f"leapwright.{name}")


def named_object(bpy, name, path):
    """The object ``name`` of the open file; bad input naming the file's objects when there is none."""
    obj = bpy.data.objects.get(name)
    if obj is None:
        names = ", ".join(sorted(o.name for o in bpy.data.objects)[:12])
        raise InvalidTrajectoryError(f"{path}: no object {name!r}; objects are: {names}")
    return obj


def input_errors():
    """The error classes that mean bad input (the core's, one copy for the add-on and the command line)."""
    from leapwright.core.base.errors import LeapwrightError

    return (LeapwrightError,)


def open_blend(path):
    """Open a .blend in this process (Blender's loading notes go to stderr); returns ``bpy``."""
    bpy = _bpy()
    try:
        with _blender_chatter_aside():
            bpy.ops.wm.open_mainfile(filepath=os.path.abspath(str(path)), load_ui=False)
    except RuntimeError as exc:
        raise InvalidTrajectoryError(f"{path}: cannot open it as a .blend ({str(exc).strip()[:120]})") from None
    return bpy


def save_blend(path):
    """Save the open file over ``path``, whole or not at all.

    Saved as a copy beside it (same folder: relative paths stay valid) and
    renamed over it, so a full disk or a killed process leaves the original.
    """
    from cli.output_files import OutputError, replacing

    bpy = _bpy()
    with replacing(path, "the .blend") as tmp:
        try:
            with _blender_chatter_aside():
                bpy.ops.wm.save_as_mainfile(filepath=tmp, copy=True, check_existing=False)
        except RuntimeError as exc:
            raise OutputError(f"cannot save {str(path)!r}: {str(exc).strip().splitlines()[-1][:160]}; "
                              "the file is unchanged") from None


def saved_setting(scene, name, group="leapwright_plan"):
    """A panel setting the file keeps for ``scene``, or None when it was never set.

    The add-on is not registered in the command line's Blender, so its settings are
    read as the plain ID properties the file keeps: among the ID's custom properties
    up to Blender 4.5, in the separate storage of add-on-defined properties from 5.0
    (``bl_system_properties_get``; ``scene.get`` no longer sees them there).
    """
    system = getattr(scene, "bl_system_properties_get", None)
    holder = system() if system is not None else scene
    stored = holder.get(group) if holder is not None else None
    return stored.get(name) if stored is not None and hasattr(stored, "get") else None


def jump_gravity(scene):
    """The jump panel's gravity saved in the file [m/s^2]; the add-on's default when unset."""
    value = saved_setting(scene, "gravity")
    return addon_module("blender.scene_units").exact_gravity(value) if value is not None else STANDARD_GRAVITY


#: ``--follow`` values of ``leapwright check`` and the add-on's Follow setting they stand for.
FOLLOW_OPTIONS = {"auto": "AUTO", "bone": "BONE", "body": "BODY"}


def sample_blend_track(path, object_name, bone_name=None, follow="auto", table="de_leva_male"):
    """The path the check follows, over the scene's frame range, as the panel's Check Jump samples it.

    The choice is the add-on's (``addon.check.path``): ``auto`` follows the whole-body
    centre of mass whenever the rig reads as a body (its bone tree, or a bone map or bone
    masses it carries), else the bone (``bone_name``, else the body bone saved in the
    file's jump panel), else the object; ``bone`` and ``body`` force one.

    Parameters
    ----------
    path : str
        The .blend file; opened read-only in this process (never saved).
    object_name : str
    bone_name : str, optional
        A pose bone of ``object_name``; its head is the body bone's path.
    follow : str
        ``auto``, ``bone`` or ``body`` (:data:`FOLLOW_OPTIONS`).
    table : str
        Segment table of the whole-body COM (``core.body.segment_tables.TABLES``).

    Returns
    -------
    frames : ndarray (n,)
        Scene frames.
    positions : ndarray (n, 3)
        World positions [m] (Blender units x ``unit_settings.scale_length``), Z up.
    fps : float
        The scene's true rate ``fps / fps_base`` [frames/s].
    gravity : float
        The jump panel's gravity saved in the file [m/s^2] (:func:`jump_gravity`), the
        one the jump was planned under; Blender's physics gravity is not read.
    checked : dict
        ``follows`` ("body", "bone" or "object"), ``text`` ("checked the whole-body COM
        (map found from the bone tree)"), ``note`` (why Automatic fell back, or ""),
        ``reason`` (why this path: "Automatic: the rig reads as a body") and
        ``stretch``: the deform legs and arms longer than at rest, read from the evaluated
        rig over the scene's range by the same code as the panel's Check Jump
        (:func:`limb_stretch`).

    Raises
    ------
    InvalidTrajectoryError
        No such object or bone, an unknown ``follow``, or ``body`` on a rig that cannot
        be read as a body (the add-on's message).
    """
    if follow not in FOLLOW_OPTIONS:
        raise InvalidTrajectoryError(f"--follow {follow!r}: choose one of {', '.join(FOLLOW_OPTIONS)}")
    bpy = open_blend(path)
    scene = bpy.context.scene
    obj = named_object(bpy, object_name, path)
    if bone_name and (obj.type != "ARMATURE" or bone_name not in obj.pose.bones):
        raise InvalidTrajectoryError(f"{path}: {object_name!r} has no pose bone {bone_name!r}; "
                                     "give --bone with the body (COM) bone's name")
    source = "given with --bone" if bone_name else ""
    if not bone_name and obj.type == "ARMATURE":
        # As the panel's Check Jump: the body bone saved in the file's jump panel.
        saved = saved_setting(scene, "com_bone")
        bone_name = saved if isinstance(saved, str) and saved in obj.pose.bones else None
        source = "saved in the file's jump panel" if bone_name else ""
    choose = addon_module("check.path")
    try:
        found = choose.checked_path(scene, obj, bone_name or "", FOLLOW_OPTIONS[follow], table)
    except addon_module("body.com").BodyError as exc:
        raise InvalidTrajectoryError(f"{path}: {choose.body_refusal(exc, 'give --follow bone')}") from None
    fps = scene.render.fps / scene.render.fps_base
    gravity = jump_gravity(scene)
    reason = found.reason + (f" ({source})" if found.follows == "bone" and source else "")
    checked = {"follows": found.follows, "text": found.text, "note": found.note, "reason": reason,
               "stretch": limb_stretch(scene, obj)}
    return found.frames, found.points, fps, gravity, checked


def limb_stretch(scene, obj):
    """Deform legs and arms of ``obj`` longer than at rest over the scene's frame range.

    The panel's Check Jump reads them the same way (``addon.rig.verify.limb_stretch_findings``:
    the evaluated deform bones, world space, scene time); empty for an object that is not
    a rig or a rig that does not read as a body.

    Returns
    -------
    list of dict
        ``kind`` ("leg stretch" / "arm stretch"), ``first_frame``, ``last_frame``,
        ``message`` (with the largest stretch in %) and ``suggestion``.
    """
    import numpy as np

    frames = np.arange(scene.frame_start, scene.frame_end + 1)
    found = addon_module("rig.verify").limb_stretch_findings(scene, obj, frames)
    return [{"kind": kind, "first_frame": first, "last_frame": last, "message": message, "suggestion": fix}
            for kind, first, last, message, fix in found]
