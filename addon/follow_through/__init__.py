"""Follow-through baked onto chosen bones: settings, operators, panel and the bake.

May import: blender, rig, core.base, core.rig, core.follow_through
"""
