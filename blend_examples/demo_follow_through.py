"""The demo's follow-through: the ponytail and the skirt trail the jump, and the README's strip.

``follow_through_pass(demo)`` is a pass of ``run_demo.py``: it bakes the ponytail and the
skirt flaps with the extension's *Bake Follow-Through*
(``bpy.ops.leapwright.bake_follow_through``) over the scene range and reports the panel's
readout (largest swing per bone). Run as a script::

    .venv/bin/python blend_examples/demo_follow_through.py --strip blend_examples/out/jump_demo.blend --out docs

renders ``follow_through_strip.png`` from a saved demo file (Cycles on the CPU,
small and few samples, close-ups cropped around the mannequin): the moments
around the flight with the baked layer, and the same moments with it muted, one
row each. ``--probe FILE.blend`` prints
``LAG {json}``: the ponytail tip's and a skirt flap's angle from straight down
per frame, with the layer and with it muted, the phase markers and the preset's
sag (for tests/blender_demo). Blender is imported inside the functions:
``run_demo`` points Blender's user directories elsewhere before the first
``import bpy``.
"""

import argparse
import json
import math
import os
import sys
import tempfile

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
#: The preset the demo bakes with. Hair (1.5 Hz, zeta 0.25, sag 20 deg) on the tilted
#: ponytail floats it and drops it past standing within 0.1 s of touchdown.
PRESET = "hair"
TRACK = "lw:follow_through"
STATE_PROPERTY = "lw_state"
#: The bones that trail, as the mannequin names them: the ponytail, then each skirt flap.
SKIRT_FLAPS = ("front", "back", "left", "right")
#: Size of each rendered moment in the strip [px].
TILE = (200, 225)


def lag_bones():
    """Names of the baked bones: ponytail root to tip, then the skirt flaps (top, hem)."""
    import mannequin

    return tuple(mannequin.PONYTAIL) + tuple(f"skirt_{flap}_{k}" for flap in SKIRT_FLAPS for k in (1, 2))


def follow_through_pass(demo):
    """Bake the ponytail and the skirt with the extension and report the readout."""
    import bpy

    from demo_session import operator_call

    scene, rig = demo.scene, demo.objects["rig"]
    s = scene.leapwright_follow_through
    s.preset = PRESET
    s.use_scene_range = True
    # The ponytail and the skirt keep out of the mannequin's head, neck, torso and thighs (capsules
    # fitted to its deform bones; its parts are separate meshes, not skinned, so the radii come from
    # the body's proportions).
    s.keep_out = True
    bones = lag_bones()
    operator_call(bpy.ops.leapwright.bake_follow_through, rig, bones=",".join(bones), preset="SETTINGS")
    peaks = json.loads(s.readout)
    import mannequin

    tip, hem = mannequin.PONYTAIL[-1], "skirt_back_2"
    return (f"follow-through ({PRESET}) baked on {len(bones)} bones over frames {scene.frame_start}-"
            f"{scene.frame_end}; largest swing {tip} {peaks[tip]:.1f} deg, {hem} {peaks[hem]:.1f} deg")


def _markers(scene):
    """``{force-plate phase: frame}`` of the jump's phase markers (named in the animator's words)."""
    from leapwright.core.base.phase_words import phase_of_marker  # the repository's core: the marker words

    found = ((phase_of_marker(m.name), int(m.frame)) for m in scene.timeline_markers)
    return {p[0]: frame for p, frame in found if p is not None}


def _angles_from_down(scene, rig, names, frames):
    """Angle of each bone's +Y axis from straight down [deg], per frame (evaluated rig)."""
    out = []
    for f in frames:
        scene.frame_set(int(f))
        row = []
        for name in names:
            y = (rig.matrix_world.to_3x3() @ rig.pose.bones[name].matrix.to_3x3()).col[1].normalized()
            row.append(math.degrees(math.acos(max(-1.0, min(1.0, -y.z)))))
        out.append(row)
    return np.array(out)


def _open(blend):
    import bpy

    bpy.ops.wm.open_mainfile(filepath=os.path.abspath(blend))
    scene = bpy.context.scene
    rig = next(o for o in bpy.data.objects if o.type == "ARMATURE")
    return scene, rig, rig.animation_data.nla_tracks.get(TRACK)


def _without_layer(rig, track):
    """Mute the layer. A muted layer leaves un-keyed channels at its last values, so put
    back the ones the extension remembered from before it (its state property, JSON)."""
    track.mute = True
    for rec in json.loads(rig.get(STATE_PROPERTY, "{}")).get("static", []):
        if rec["capability"] == "follow_through":
            rig.path_resolve(rec["path"])[rec["index"]] = rec["value"]


def _chains():
    """The baked chains, root to tip: the ponytail and each skirt flap."""
    import mannequin

    return [tuple(mannequin.PONYTAIL)] + [(f"skirt_{flap}_1", f"skirt_{flap}_2") for flap in SKIRT_FLAPS]


def _capsule_depths(scene, rig, frames):
    """Deepest each chain's bone tips go into the body capsules it was kept out of, and below the
    ground, over ``frames`` [m] (negative: clear), read back through the depsgraph in world space.

    The capsules are the bake's own fit of the rig (the extension's body map, not registered here)
    with each chain's radii from the body readout the file keeps; a part the chain was not simulated
    against (out of its reach) is measured with its full radius all the same. Closest point on a
    segment: Ericson 2005, "Real-Time Collision Detection", sec. 5.1.2.
    """
    import bpy

    from cli.blend import saved_setting
    from leapwright.follow_through import body_colliders

    body = json.loads(saved_setting(scene, "body_readout", "leapwright_follow_through") or "{}")
    fit = body_colliders.fit_body(scene, rig)
    full = {name: values[0] for name, values in body["parts"].items()}
    worst = {chain[0]: -np.inf for chain in _chains()}
    for f in frames:
        scene.frame_set(int(f))
        ev = rig.evaluated_get(bpy.context.evaluated_depsgraph_get())
        world = np.array(ev.matrix_world)
        mats = np.array([world @ np.array(ev.pose.bones[n].matrix) for n in fit.bones])[None]
        for chain in _chains():
            radii = dict(full, **body["chains"][chain[0]])
            r = np.array([radii[p.name] for p in fit.parts])
            starts, ends = body_colliders.body_segments(fit, np.where(r > 0.0, r, 1.0), mats, 1.0)
            tips = np.array([list(ev.matrix_world @ ev.pose.bones[b].tail) for b in chain])
            ab = ends[0] - starts[0]  # (K, 3)
            t = np.clip(np.einsum("nkc,kc->nk", tips[:, None] - starts[0][None], ab) / np.maximum((ab * ab).sum(-1), 1e-12), 0, 1)
            gap = np.linalg.norm(tips[:, None] - (starts[0][None] + t[..., None] * ab[None]), axis=-1)
            depth = np.where(r > 0.0, r[None] - gap, -np.inf).max()
            worst[chain[0]] = max(worst[chain[0]], float(depth), float(body["ground"] - tips[:, 2].min()))
    return worst


def probe(blend):
    """Print ``LAG {json}`` for a saved demo file (plain Blender data; the add-on's body fit is imported,
    not registered)."""
    import mannequin

    scene, rig, track = _open(blend)
    names = [mannequin.PONYTAIL[-1], "skirt_back_2"]
    frames = np.arange(scene.frame_start, scene.frame_end + 1)
    baked = _angles_from_down(scene, rig, names, frames)
    kept_out = _capsule_depths(scene, rig, frames)
    _without_layer(rig, track)
    animated = _angles_from_down(scene, rig, names, frames)
    free = _capsule_depths(scene, rig, frames)  # the animated pose, with the layer muted
    track.mute = False
    from leapwright.core.follow_through.presets import chain_preset  # the repository's core: the preset's published sag

    print("LAG " + json.dumps({"fps": scene.render.fps / scene.render.fps_base, "frames": frames.tolist(),
                               "bones": names, "baked_deg": baked.tolist(), "animated_deg": animated.tolist(),
                               "markers": _markers(scene), "sag_deg": math.degrees(chain_preset(PRESET).sag),
                               "track_strips": len(track.strips), "capsule_depth_m": kept_out,
                               "capsule_depth_muted_m": free}))


def strip_moments(marks):
    """(frame, label) of the strip: crouch, take-off, in the air, touchdown and just after."""
    up, down = marks["flight"], marks["landing"]
    return [(marks["propulsion"] - 2, "crouch"), (up, "take-off"), ((up + down) // 2, "in the air"),
            (down - 1, "touch-down"), (down + 2, "landed +2")]


def _render_close_up(scene, rig, frame, path, zoom):
    """Render ``frame`` cropped to a box ``1/zoom`` of the picture around the mannequin."""
    import bpy
    from bpy_extras.object_utils import world_to_camera_view

    scene.frame_set(frame)
    middle = (rig.matrix_world @ rig.pose.bones["hips"].head + rig.matrix_world @ rig.pose.bones["head"].head) / 2
    at = world_to_camera_view(scene, scene.camera, middle)
    half = 0.5 / zoom
    x0 = min(max(at.x - half, 0.0), 1.0 - 2 * half)
    y0 = min(max(at.y - half, 0.0), 1.0 - 2 * half)
    r = scene.render
    r.use_border, r.use_crop_to_border = True, True
    r.border_min_x, r.border_max_x, r.border_min_y, r.border_max_y = x0, x0 + 2 * half, y0, y0 + 2 * half
    r.filepath = path
    bpy.ops.render.render(write_still=True)
    return path


def render_strip(blend, out_dir, samples=16, zoom=1.6):
    """Render close-ups of the moments with the layer, then with it muted: two rows."""
    import bpy

    sys.path.insert(0, HERE)
    import demo_pictures as pics

    scene, rig, track = _open(blend)
    pics.render_moments(scene, [], "", samples=samples)  # the strip's Cycles settings
    scene.render.resolution_x, scene.render.resolution_y = (round(v * zoom) for v in TILE)
    scene.render.resolution_percentage = 100
    moments = strip_moments(_markers(scene))
    frames_dir = tempfile.mkdtemp(prefix="lw-lag-strip-")
    paths, labels = [], []
    for muted in (False, True):
        if muted:
            _without_layer(rig, track)
        for k, (frame, label) in enumerate(moments):
            paths.append(_render_close_up(scene, rig, frame, os.path.join(frames_dir, f"{int(muted)}_{k}.png"),
                                          zoom))
            labels.append((frame, "no layer" if muted else label))
    os.makedirs(out_dir, exist_ok=True)
    out = pics.compose_strip(paths, labels, os.path.join(out_dir, "follow_through_strip.png"), TILE,
                             columns=len(moments))
    from PIL import Image  # matplotlib's own dependency

    # a 256-colour palette keeps the README picture small (the renders are smooth shades)
    Image.open(out).convert("RGB").quantize(256).save(out, optimize=True)
    bpy.ops.wm.read_factory_settings(use_empty=True)
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(description="probe or render the demo's follow-through")
    ap.add_argument("--probe", help="a saved demo .blend to read back")
    ap.add_argument("--strip", help="a saved demo .blend to render the strip from")
    ap.add_argument("--out", default=os.path.join(os.path.dirname(HERE), "docs"), help="output directory")
    args = ap.parse_args(argv)
    sys.path.insert(0, HERE)
    sys.path.insert(0, os.path.dirname(HERE))
    from script_exit import run_and_exit

    def body():
        if args.probe:
            probe(args.probe)
        elif args.strip:
            path = render_strip(args.strip, os.path.abspath(args.out))
            print(f"wrote {path} ({os.path.getsize(path) // 1024} kB)")
        else:
            raise SystemExit("give --probe FILE.blend or --strip FILE.blend")

    run_and_exit("demo_follow_through", body)


if __name__ == "__main__":
    main()
