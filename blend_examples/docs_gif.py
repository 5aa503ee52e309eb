"""The README's animated picture: the demo jump with its follow-through, as a small GIF.

Usage::

    .venv/bin/python blend_examples/docs_gif.py --blend blend_examples/out/jump_demo.blend --docs docs

Opens the demo file ``run_demo.py`` saved (the written jump, the arm swing and the
baked follow-through layer, all plain keys and NLA tracks, so the extension need not
be installed to play them) and renders every second frame of the scene range with
Cycles on the CPU (headless, no GPU): a small picture, few samples, denoised. The
frames become ``jump_demo.gif`` at half the scene's rate in frames, so it plays in real
time, with a 256-colour palette so the file stays small (well under 1.5 MB).
Blender is imported inside the functions (``private_user_dirs`` first).
"""

import argparse
import os
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
#: Picture size [px]: a third smaller than the demo's camera frame (320 x 360).
SIZE = (240, 270)
#: Every STEP-th frame is rendered; the GIF shows each for STEP / fps seconds.
STEP = 2
#: Cycles samples per pixel, denoised afterwards (enough for flat shading at this size).
SAMPLES = 8


def render_frames(blend, folder, size=SIZE, step=STEP, samples=SAMPLES):
    """Render the scene range of ``blend`` every ``step`` frames; return (paths, fps)."""
    import bpy

    bpy.ops.wm.open_mainfile(filepath=blend)
    scene = bpy.context.scene
    r = scene.render
    r.engine = "CYCLES"
    scene.cycles.device = "CPU"
    scene.cycles.samples = samples
    scene.cycles.use_denoising = True
    scene.cycles.max_bounces = 2
    r.resolution_x, r.resolution_y = size
    r.resolution_percentage = 100
    r.use_border = False
    r.image_settings.file_format = "PNG"
    paths = []
    for frame in range(scene.frame_start, scene.frame_end + 1, step):
        scene.frame_set(frame)
        r.filepath = os.path.join(folder, f"frame_{frame:04d}.png")
        bpy.ops.render.render(write_still=True)
        paths.append(r.filepath)
    fps = r.fps / r.fps_base
    bpy.ops.wm.read_factory_settings(use_empty=True)
    return paths, fps


def write_gif(paths, out_path, frame_seconds):
    """One GIF of the PNGs, one shared 256-colour palette, looping, ``frame_seconds`` per picture."""
    from PIL import Image  # matplotlib's own dependency

    frames = [Image.open(p).convert("RGB") for p in paths]
    palette = frames[len(frames) // 2].quantize(256)  # a mid-jump picture has every colour the scene has
    quantized = [f.quantize(palette=palette, dither=Image.Dither.NONE) for f in frames]
    quantized[0].save(out_path, save_all=True, append_images=quantized[1:], loop=0, optimize=True,
                      duration=int(round(1000 * frame_seconds)), disposal=1)
    return out_path


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--blend", required=True, help="the demo's saved jump_demo.blend")
    ap.add_argument("--docs", required=True, help="folder for jump_demo.gif")
    args = ap.parse_args(argv)
    sys.path.insert(0, HERE)
    from demo_session import private_user_dirs

    work = tempfile.mkdtemp(prefix="lw-gif-")
    private_user_dirs(work)
    paths, fps = render_frames(os.path.abspath(args.blend), work)
    os.makedirs(args.docs, exist_ok=True)
    out = write_gif(paths, os.path.join(args.docs, "jump_demo.gif"), STEP / fps)
    print(f"wrote {out} ({len(paths)} frames, {os.path.getsize(out) // 1024} kB)")


if __name__ == "__main__":
    from script_exit import run_and_exit

    run_and_exit("docs_gif", main)
