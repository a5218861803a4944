"""solsphere: Hansen solubility spheres from bench results.

Fit a sphere (centre dD, dP, dH and radius R0, in MPa½) to dissolves / partly / does-not
results, rank untried solvents, design blends that land inside, and share the picture.
Predictions are guides: confirm at the bench and read each solvent's safety data sheet.
"""

__version__ = "0.1.0"
