"""Every default and limit of the producers, in one module without numpy, scipy or sympy.

The command line, the Python surface and the search read them from here, so a default is
written once. The checker's own bounds live in certify/check (proofs/FORMAT.md, "Bounds").
"""

from fractions import Fraction

# The ranges a user may ask for are the checker's own, so they are not written twice.
from .check.reader import MAX_PERIOD, MAX_PRECISION, MIN_PRECISION  # noqa: F401

# Working precision of one certificate, in bits.
DEFAULT_PRECISION = 53  # bits to start at
DEFAULT_MAX_PRECISION = 424  # highest precision tried before answering undecided

# One equilibrium over a parameter box.
MIN_PIECE_FRACTION = Fraction(1, 2**16)  # smallest piece width, relative to the requested box
MAX_PIECES = 256  # pieces of one parameter box
INFLATION_ROUNDS = 20  # epsilon-inflation steps before no-enclosure
HINT_DIMENSION = 9  # from this many variables on, definiteness is proved from a written hint

# Counting every equilibrium in a region.
SCAN_MAX_BOXES = 200_000  # boxes one scan may examine
SCAN_TIME_LIMIT = 120.0  # seconds of one scan

# Sweeps over parameter grids.
MAX_CELLS = 10_000_000  # cells of one grid
SWEEP_MAX_BOXES = 2_000  # boxes one cell's scan may examine
MAX_REFINE = 8  # further bisection levels for undecided cells
