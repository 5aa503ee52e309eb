"""Game export: checks of a jump clip for a game engine (whole frames, root motion).

May import: base
"""
