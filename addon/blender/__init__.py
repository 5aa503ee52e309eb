"""The add-on's Blender base: the version switch (compat.py), bulk key writing, what
leapwright owns and its removal (ownership.py, action_backup.py, linked_actions.py,
layer_rewrite.py), scene units, the curve types every capability writes, and sub-panel parts.

May import: core.base
"""
