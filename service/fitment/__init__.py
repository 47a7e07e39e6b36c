"""The pure fit engine: does this plug fit this port, and by how many millimetres not.

Imports neither Flask nor SQLAlchemy nor pint; see `engine.check_fit`.
"""
from .engine import ENGINE_VERSION, check_fit, verdict_of
from .model import Dim, FitResult, Options, PlugSpec, PortSpec

__all__ = ["ENGINE_VERSION", "Dim", "FitResult", "Options", "PlugSpec", "PortSpec", "check_fit", "verdict_of"]
