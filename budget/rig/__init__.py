"""The measurement model of a rig: what the rig file describes, turned into one vectorized function.

It owns the rig description (frozen dataclasses), the geometry from dial to image (the one home of
tilt, projection and distortion), the pivot as the user finds it, the voltage source, the budget
components (error sources as input quantities with source notes), the virtual rig itself, running
both propagation methods on it, evaluating measured data, and open-loop prediction from a sweep.
It may import the engine (propagation), straight-line fits (fit), image physics (imaging) and
results; it reads no files and writes nothing.
"""
