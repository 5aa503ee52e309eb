"""Simple shapes and flat-coloured materials for the demo, made without ``bpy.ops``.

Meshes are built with ``bmesh`` so the scene can be made headless with no
editor context. Lengths are Blender units (the demo scene keeps the default
unit scale, so 1 BU = 1 m).
"""

import bmesh
import bpy
from mathutils import Matrix, Vector


def material(name, rgb, roughness=0.55, emission=0.0):
    """A Principled BSDF material of one colour.

    Parameters
    ----------
    name : str
    rgb : tuple of 3 float
        Linear base colour [0, 1].
    roughness : float
    emission : float
        Emission strength of the same colour [W/m^2-ish, Blender's scale]; 0 = none.
    """
    mat = bpy.data.materials.new(name)
    mat.use_nodes = True
    bsdf = next(n for n in mat.node_tree.nodes if n.type == "BSDF_PRINCIPLED")
    bsdf.inputs["Base Color"].default_value = (*rgb, 1.0)
    bsdf.inputs["Roughness"].default_value = roughness
    if emission > 0.0:
        bsdf.inputs["Emission Color"].default_value = (*rgb, 1.0)
        bsdf.inputs["Emission Strength"].default_value = emission
    mat.diffuse_color = (*rgb, 1.0)  # the viewport's solid colour, so the file reads the same when opened
    return mat


def _object_from_bmesh(name, bm, mat, matrix, collection, smooth):
    mesh = bpy.data.meshes.new(name)
    bm.to_mesh(mesh)
    bm.free()
    if smooth:
        mesh.polygons.foreach_set("use_smooth", [True] * len(mesh.polygons))
    mesh.materials.append(mat)
    obj = bpy.data.objects.new(name, mesh)
    obj.matrix_world = matrix
    collection.objects.link(obj)
    return obj


def sphere(name, centre, radii, mat, collection, segments=24):
    """An ellipsoid at ``centre`` with semi-axes ``radii`` (x, y, z) [BU]."""
    bm = bmesh.new()
    bmesh.ops.create_uvsphere(bm, u_segments=segments, v_segments=segments // 2, radius=1.0)
    matrix = Matrix.Translation(Vector(centre)) @ Matrix.Diagonal((*radii, 1.0))
    return _object_from_bmesh(name, bm, mat, matrix, collection, smooth=True)


def limb(name, start, end, r_start, r_end, mat, collection, segments=16):
    """A tapered cylinder from ``start`` to ``end`` [BU], radii at each end [BU]."""
    a, b = Vector(start), Vector(end)
    axis = b - a
    bm = bmesh.new()
    bmesh.ops.create_cone(bm, cap_ends=True, cap_tris=False, segments=segments,
                          radius1=r_start, radius2=r_end, depth=axis.length)
    rot = axis.normalized().to_track_quat("Z", "Y").to_matrix().to_4x4()
    matrix = Matrix.Translation((a + b) / 2.0) @ rot
    return _object_from_bmesh(name, bm, mat, matrix, collection, smooth=True)


def box(name, centre, size, mat, collection, rotation=None):
    """A box of ``size`` (x, y, z) [BU] centred at ``centre``, optionally rotated (3x3 Matrix)."""
    bm = bmesh.new()
    bmesh.ops.create_cube(bm, size=1.0)
    rot = rotation.to_4x4() if rotation is not None else Matrix.Identity(4)
    matrix = Matrix.Translation(Vector(centre)) @ rot @ Matrix.Diagonal((*size, 1.0))
    return _object_from_bmesh(name, bm, mat, matrix, collection, smooth=False)


def slab_along(name, start, end, across, width, thickness, mat, collection):
    """A thin board from ``start`` to ``end`` [BU], ``width`` [BU] along ``across``, for cloth flaps."""
    a, b = Vector(start), Vector(end)
    z = (b - a).normalized()
    x = Vector(across)
    x = (x - x.dot(z) * z).normalized()
    rot = Matrix((x, z.cross(x), z)).transposed()
    return box(name, (a + b) / 2.0, (width, thickness, (b - a).length), mat, collection, rotation=rot)


def grid(name, size, mat, collection):
    """A flat square of side ``size`` [BU] on z = 0."""
    bm = bmesh.new()
    bmesh.ops.create_grid(bm, x_segments=1, y_segments=1, size=size / 2.0)
    return _object_from_bmesh(name, bm, mat, Matrix.Identity(4), collection, smooth=False)


def parent_to_bone(obj, rig, bone_name):
    """Parent ``obj`` to a bone of ``rig`` keeping its world placement (rest pose).

    Bone parenting places a child relative to the bone's tail, so the parent
    inverse is the rest matrix of the tail in world space.
    """
    bone = rig.data.bones[bone_name]
    tail = rig.matrix_world @ bone.matrix_local @ Matrix.Translation((0.0, bone.length, 0.0))
    world = obj.matrix_world.copy()
    obj.parent = rig
    obj.parent_type = "BONE"
    obj.parent_bone = bone_name
    obj.matrix_parent_inverse = tail.inverted()
    obj.matrix_basis = world
