"""Checking a jump made by hand or captured: flights found and fitted, implied gravity,
phases, and the findings (findings.py decides what is reported; physics_checks.py computes
the evidence: arcs in the air, forward speed, dip and landing forces, feet), and vertical
force-plate traces read into the same phases, take-off speed and jump height (force_trace.py).

May import: base
"""
