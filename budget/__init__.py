"""thetabudget: uncertainty budgets for camera-based pointer-angle measurement.

Scope: JCGM 100 linear propagation and JCGM 101 Monte Carlo for the angle of a
pointer located in camera images, and for the static gain from a voltage sweep.
It does not control hardware, grab frames from a camera, or compute CMC claims.
"""

__version__ = "0.1.0"
