"""edgefit: optical band gaps, transition type and Urbach energy from UV-Vis-NIR spectra."""
__version__ = "0.1.0"

from .errors import EdgefitError  # noqa: E402
from .spectrum import Spectrum, Absorption, Film, Flag  # noqa: E402


def __getattr__(name):
    # Lazy so that `import edgefit` stays light and io/analysis import errors surface clearly.
    if name in ("read_spectra", "parse_spectra"):
        from . import io
        return getattr(io, name)
    if name in ("analyse", "analyse_file", "AnalysisOptions"):
        from . import analysis
        return getattr(analysis, name)
    raise AttributeError(f"module 'edgefit' has no attribute {name!r}")


__all__ = ["__version__", "EdgefitError", "Spectrum", "Absorption", "Film", "Flag",
           "read_spectra", "parse_spectra", "analyse", "analyse_file", "AnalysisOptions"]
