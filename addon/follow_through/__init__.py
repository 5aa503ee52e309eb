"""Follow-through baked onto chosen bones: settings, operators, panel and the bake.

May import: blender, rig, core.base, core.follow_through
"""
