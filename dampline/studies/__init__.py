"""Design studies on a line: modal truncation error, the damping needed to keep a band
below a level, absorber tuning and parameter sweeps."""

from .absorber import AbsorberTuning, tune_absorber
from .damping import DampingNeeded, damping_needed
from .sweep import Sweep, SweepPeaks, sweep, sweep_paths
from .truncation import TruncationStudy, local_db_error, truncation_study

__all__ = ["truncation_study", "TruncationStudy", "local_db_error", "damping_needed",
           "DampingNeeded", "tune_absorber", "AbsorberTuning", "sweep", "Sweep", "SweepPeaks",
           "sweep_paths"]
