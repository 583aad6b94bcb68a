"""Meeting a target: verdicts against a goal, what to change and by how much, claims across a range,
and conformity decisions.

It re-runs the one rig model (rig/) on changed rig descriptions; it never builds a second,
simplified model. It may import rig, imaging, choice, fit, the engine, results and input specs.
"""
