"""certify: proved existence, uniqueness and hyperbolicity of equilibria of nonlinear models."""

from .version import __version__

from .api import EquilibriumResult, SweepResult, equilibrium, scan, sweep, verify
from .check import CertificateRejected, Verified
from .errors import InputError
from .model import Model, load_model, make_model, model_from_text

__all__ = ["CertificateRejected", "EquilibriumResult", "InputError", "Model", "SweepResult",
           "Verified", "__version__", "equilibrium", "load_model", "make_model",
           "model_from_text", "scan", "sweep", "verify"]
