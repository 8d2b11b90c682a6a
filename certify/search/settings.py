"""Defaults of the search, in a module with no heavy imports (the verify path reads them)."""

from fractions import Fraction

DEFAULT_PRECISION = 53  # bits to start at
DEFAULT_MAX_PRECISION = 424  # highest precision tried before answering undecided
MIN_PIECE_FRACTION = Fraction(1, 2**16)  # smallest piece width, relative to the requested box
MAX_PIECES = 256  # pieces of one parameter box
INFLATION_ROUNDS = 20  # epsilon-inflation steps before no-enclosure
