"""The trusted kernel: re-verifies a certificate from the file alone.

Imports nothing from the rest of certify and nothing outside the standard library except
python-flint (one of its two arithmetics). The modules follow proofs/FORMAT.md: the arithmetics
(arith, dyadic), the expressions (expr, ad), the reader, one module per obligation (enclosure 1,
inertia 2, forms 3, tiling 4, count 5, nonhyperbolic 6, with exact linear algebra in exact),
and the verdict.
"""

from .arith import ArbArithmetic, DomainError, ExactArithmetic
from .expr import ExpressionError, Tape, parse_expression
from .reader import CertificateRejected, load
from .verdict import Verified, check

__all__ = ["ArbArithmetic", "CertificateRejected", "DomainError", "ExactArithmetic",
           "ExpressionError", "Tape", "Verified", "check", "load", "parse_expression"]
