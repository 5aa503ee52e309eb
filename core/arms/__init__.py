"""The arm swing: placing it inside the push (swing.py), its plane (plane.py), the elbow's
bend (elbow.py), the push window read from a plan or a path (push_window.py), detecting
and re-timing a swing (timing.py).

May import: base, plan, body, rig
"""
