"""Planning a jump: goals -> phases -> centre-of-mass curves. Take-off speed from a height or
hang-time goal (goals.py), the C2 contact shapes and their ground force (contact_shapes.py; the
least peak force solved exactly in shape_search.py, the free durations in shape_choice.py),
the flight (flight_path.py), the feet (feet.py), plausibility grades, stylised timing, and
refusals with fixes that were tried (refusals.py).

May import: base
"""
