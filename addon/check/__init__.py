"""Check Jump: the path it follows (path.py), the operators, panel and the path overlay.

May import: blender, rig, plan, body, core.base, core.check, core.body, core.plan
"""
