"""Model files (TOML) and models built in Python, with exact parameters and checked expressions."""

from .model import Interval, Model, load_model, make_model, model_from_text, parse_value

__all__ = ["Interval", "Model", "load_model", "make_model", "model_from_text", "parse_value"]
