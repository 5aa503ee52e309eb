"""Reading a rig in Blender: world metres to a bone's channels (space.py) and evaluated pose
matrices per frame in bulk, in scene time (sampling.py).

May import: blender, core.base, core.rig
"""
