"""The trusted kernel: re-verifies a certificate from the file alone.

Imports nothing from the rest of certify and nothing outside the standard library except
python-flint (one of its two arithmetics). See proofs/FORMAT.md for what each check proves.
"""

from .arith import ArbArithmetic, DomainError, ExactArithmetic
from .certificate import CertificateRejected, Verified, check, load
from .expr import ExpressionError, Tape, parse_expression, parse_rational

__all__ = ["ArbArithmetic", "CertificateRejected", "DomainError", "ExactArithmetic",
           "ExpressionError", "Tape", "Verified", "check", "load", "parse_expression",
           "parse_rational"]
