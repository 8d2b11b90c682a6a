"""certify: proved existence, uniqueness and hyperbolicity of equilibria of nonlinear models."""

__version__ = "0.1.0"

from .api import EquilibriumResult, equilibrium, verify  # noqa: E402
from .check import CertificateRejected, Verified  # noqa: E402
from .errors import InputError  # noqa: E402
from .model import Model, load_model, make_model, model_from_text  # noqa: E402

__all__ = ["CertificateRejected", "EquilibriumResult", "InputError", "Model", "Verified",
           "__version__", "equilibrium", "load_model", "make_model", "model_from_text", "verify"]
