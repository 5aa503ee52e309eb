"""Planning and writing the jump: the plan's settings, the Write Jump operators, its panel,
the cached plan (link.py), the keys of the blocking pass and root motion.

May import: blender, rig, core.base, core.plan, core.rig
"""
