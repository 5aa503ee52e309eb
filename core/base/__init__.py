"""The shared base of the core: errors, published constants, piecewise polynomials,
rotation vectors, the time base (fps and frames) and cubic Hermite/Bezier keys.

May import: nothing else of the project
"""
