"""Limits of focus-stack plans, apart from the planning code so that command help can quote
them without loading numpy."""

# A stack that needs more frames than this is not a plan anyone will shoot.
MAX_STACK_FRAMES = 5000
DEFAULT_STACK_OVERLAP = 0.1
