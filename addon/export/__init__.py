"""Game export: clip splitting and export checks for game engines.

May import: blender, rig, plan, core.base, core.export, core.plan
"""
