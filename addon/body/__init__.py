"""The body in the air: its whole-body centre of mass read from the rig (com.py) and the
arc kept in the air (arc.py), with settings, operators and panel.

May import: blender, rig, plan, core.base, core.body, core.rig, core.check
"""
