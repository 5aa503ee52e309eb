"""The body as masses: segment tables (de Leva 1996, Dempster via Winter 2009), the
whole-body centre of mass over frames (mass.py), and the arc in the air (arc.py: root
offsets that keep the centre of mass on its take-off parabola).

May import: base, rig
"""
