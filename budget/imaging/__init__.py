"""Light, spots and locating them: optics, locator noise and pixel-locking theory, the renderer of
synthetic frames, the locators, reading real frames, and the check of the locator model against
rendered frames.

Formulas live once each (spot.py, optics.py). It may import the engine's distributions and the
rig description (plain data); it knows nothing of budgets.
"""
