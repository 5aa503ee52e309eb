"""The arm swing in Blender: finding the arms, placing and re-timing a swing, checking it.

May import: blender, rig, plan, body, core.base, core.arms, core.rig, core.plan
"""
