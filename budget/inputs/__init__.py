"""Input files: rig files, choose files and measured-data CSVs, one reader each, with one-line
errors that name the field, the allowed range and the value.

Readers turn text into the rig description (rig.description) or a choose spec; they check fields
and cross-field rules and repair nothing. They may import the rig description and the spot size
of the locator model (for the field-of-view check), and nothing that computes a budget.
"""
