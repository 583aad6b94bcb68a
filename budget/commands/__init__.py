"""The sub-commands, one module each; they only wire the layers below together.

Each module exposes ``execute(args) -> int``. A command may import everything below it
(inputs, rig, imaging, choice, advice, report, propagation); nothing imports this package but
:mod:`budget.cli`. :mod:`budget.commands.common` is the only place a random generator is made
from a seed, and the seed goes into every report.
"""
