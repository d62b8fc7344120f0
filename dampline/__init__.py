"""dampline: damped forced response of one-dimensional continua.

Public API (SI units, Hz, time convention e^{+i w t})::

    import dampline as dl
    line = dl.Line.from_dict(spec)           # or dl.load("model.toml")
    f = dl.natural_frequencies(line, count=8)
    m = dl.modes(line, count=8)              # m.frequencies, m.shape(x)
    H = dl.frf(line, freqs_hz, drive_at=0.0, response_at=[0.0, 0.25])
"""

from .errors import ModelError, ResonanceWarning
from .model import Absorber, Attachment, Damping, EndTable, Line, Segment, dumps, load, save
from .model import sections
from .model.sections import Section
from .results import FRF, Peaks
from .solve import ModeSet, frf, modes, natural_frequencies
from .analysis import Coupling, ModalTable, coupling, modal_table
from . import studies
from .studies.sweep import Sweep, sweep

__version__ = "0.1.0"

__all__ = [
    "ModelError", "ResonanceWarning", "Line", "Segment", "EndTable", "Attachment", "Absorber",
    "Damping",
    "load", "save", "dumps", "frf", "natural_frequencies", "modes", "ModeSet", "FRF",
    "Peaks", "Section", "sections", "modal_table", "ModalTable", "coupling", "Coupling",
    "studies", "__version__", "Dashboard", "sweep", "Sweep",
]


def __getattr__(name):
    # the dashboard pulls in ipywidgets and bqplot: load it only when asked for
    if name == "Dashboard":
        from .dashboard import Dashboard
        return Dashboard
    if name == "record":   # design records: nbclient and nbconvert, loaded only when asked for
        import importlib
        return importlib.import_module(".record", __name__)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

