"""Follow-through on chains of bones driven by apparent weight W = m(g + a): the chain's
parameters and presets, the sampled motion and the apparent weight it feels (samples.py),
the integrator and its exact steps, and the keys written back.

May import: base
"""
