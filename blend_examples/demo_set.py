"""The demo's set: ground, a crate to jump onto, a side camera, light and world.

The rig stands at the origin facing -Y; the crate's near face is ahead of its
toes, so a 1.0 m jump lands both feet on top. The camera looks from the rig's
right side (world -X), slightly from the front, so the jump runs left to right.
"""

import math

import bpy
from mathutils import Euler, Vector

from primitives import box, grid, material

#: Crate size (x across, y along the jump, z height) and centre along -Y [m].
CRATE_SIZE = (0.9, 0.7, 0.4)
CRATE_CENTRE_Y = -1.1
#: One frame of the strip [px]; the camera frames the whole jump at this aspect.
FRAME_SIZE = (320, 360)


def _crate(collection):
    wood = material("lw_demo_crate", (0.42, 0.22, 0.08), roughness=0.7)
    trim = material("lw_demo_crate_trim", (0.18, 0.09, 0.03), roughness=0.8)
    sx, sy, sz = CRATE_SIZE
    crate = box("crate", (0.0, CRATE_CENTRE_Y, sz / 2.0), CRATE_SIZE, wood, collection)
    # Darker edge boards make the crate's top edge, where the feet land, easy to see.
    for i, z in enumerate((0.03, sz - 0.03)):
        box(f"crate_band_{i}", (0.0, CRATE_CENTRE_Y, z), (sx + 0.02, sy + 0.02, 0.05), trim, collection)
    return crate


def _camera(collection, scene):
    cam_data = bpy.data.cameras.new("side_camera")
    cam_data.lens = 85.0
    cam_data.sensor_fit = "VERTICAL"
    cam_data.sensor_height = 24.0
    cam = bpy.data.objects.new("side_camera", cam_data)
    collection.objects.link(cam)
    target = Vector((0.0, -0.55, 1.38))
    azimuth, elevation, distance = math.radians(16.0), math.radians(6.0), 10.4
    offset = Vector((-math.cos(elevation) * math.cos(azimuth), -math.cos(elevation) * math.sin(azimuth),
                     math.sin(elevation))) * distance
    cam.location = target + offset
    cam.rotation_euler = (target - cam.location).to_track_quat("-Z", "Y").to_euler()
    scene.camera = cam
    return cam


def _lights(collection, scene):
    sun_data = bpy.data.lights.new("key_light", "SUN")
    sun_data.energy = 3.2
    sun_data.angle = math.radians(8.0)  # soft-edged shadows that still show the feet on the crate
    sun = bpy.data.objects.new("key_light", sun_data)
    sun.rotation_euler = Euler((math.radians(50.0), 0.0, math.radians(-60.0)))
    collection.objects.link(sun)
    world = scene.world or bpy.data.worlds.new("lw_demo_world")
    scene.world = world
    world.use_nodes = True
    bg = next(n for n in world.node_tree.nodes if n.type == "BACKGROUND")
    bg.inputs["Color"].default_value = (0.30, 0.40, 0.55, 1.0)
    bg.inputs["Strength"].default_value = 0.9
    return sun


def build_set(scene, collection):
    """Make the ground, crate, camera and lights; return them by name.

    Parameters
    ----------
    scene : bpy.types.Scene
    collection : bpy.types.Collection
        Where the objects are linked.
    """
    ground = grid("ground", 40.0, material("lw_demo_ground", (0.36, 0.40, 0.36), roughness=0.9), collection)
    objects = {"ground": ground, "crate": _crate(collection), "camera": _camera(collection, scene),
               "light": _lights(collection, scene)}
    scene.render.resolution_x, scene.render.resolution_y = FRAME_SIZE
    scene.render.resolution_percentage = 100
    # Plain display transform: the flat colours stay saturated, like the viewport's.
    scene.view_settings.view_transform = "Standard"
    return objects


def crate_top():
    """Height of the crate's top [m]."""
    return CRATE_SIZE[2]
