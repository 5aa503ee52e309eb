"""Re-bake as you tune: a chain setting changed in the panel re-bakes the last bake at once.

When the animator turns on "Re-bake as you tune", every change of a chain
setting (the preset, springiness, damping, sag, angle limit, carry-through and
the key options) bakes the bones and frames of the rig's last bake again with
the new values, from the motion kept with that bake (:mod:`.sampled_motion`):
no frame is evaluated again, so it keeps up with a dragged slider. When the
kept motion no longer holds (the animation changed) and sampling it took less
than :data:`LIVE_SAMPLING_LIMIT`, the re-bake samples it again; otherwise it
waits and the panel says to press Bake. Nothing here raises out of a property
update: a refusal is shown in the panel instead.
"""

import json
import time

from ..blender import ownership
from ..core.base.errors import LeapwrightError
from . import bake, sampled_motion
from .bake_job import BakeJob

#: Longest sampling a live re-bake repeats by itself [s]; a longer one waits for the Bake button.
LIVE_SAMPLING_LIMIT = 0.25

_STATUS: dict = {}  # scene pointer -> (message, milliseconds of the last live re-bake)


def status(scene):
    """``(message, ms)`` of the scene's last live re-bake: message '' when it went through."""
    return _STATUS.get(scene.as_pointer(), ("", None))


def _rig(context):
    obj = getattr(context, "active_object", None)
    if obj is None:
        jump = getattr(context.scene, "leapwright_plan", None)
        obj = getattr(jump, "rig", None)
    if obj is None or obj.type != "ARMATURE" or bake.CAPABILITY not in ownership.capabilities_written(obj):
        return None
    return obj


def retune(settings, context):
    """Re-bake the rig's last bake with the settings as they are now, if the panel asks for it.

    Parameters
    ----------
    settings : the follow-through settings (``live_rebake`` read here)
    context : bpy.types.Context

    Returns
    -------
    bool
        True when a re-bake was written.
    """
    if not getattr(settings, "live_rebake", False) or context.mode not in {"OBJECT", "POSE"}:
        return False
    scene, rig = context.scene, _rig(context)
    if rig is None:
        return False
    take = sampled_motion.kept(scene, rig)
    if take is None:
        _STATUS[scene.as_pointer()] = ("Bake once with the button: its motion is then kept for tuning", None)
        return False
    bones, (first, last, _count), _channels, chosen = take.key
    bones = bones[:chosen]
    start = time.perf_counter()
    try:
        job = BakeJob(scene, rig, bake.request_from_panel(context, rig, bones, frame_range=(int(first), int(last))))
        if not job.reused and take.seconds > LIVE_SAMPLING_LIMIT:
            job.cancel()
            _STATUS[scene.as_pointer()] = ("The animation changed since the last bake: press Bake to sample it "
                                           "again, then tuning re-bakes at once", None)
            return False
        job.run()
        job.write()
    except (bake.LagError, LeapwrightError, ownership.LayerError) as exc:
        _STATUS[scene.as_pointer()] = (str(exc), None)
        return False
    _STATUS[scene.as_pointer()] = ("", (time.perf_counter() - start) * 1e3)
    settings.readout = json.dumps(bake.degrees(job.work.peaks))
    settings.body_readout = job.work.body
    return True


def forget_status():
    _STATUS.clear()
