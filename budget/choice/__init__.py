"""Choosing a camera and lens before buying: every candidate's predicted budget, ranking, the least
pixel count that meets a goal, and the equivalent rig of a candidate.

The fast closed form used across thousands of candidates is a surrogate of the rig model
(rig/), tested against it. It may import rig, imaging, the engine and the choose-file spec.
"""
