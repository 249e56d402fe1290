"""Studies over many runs: sweeps and sampling of case values (`spec`, `runner`, `store`,
`outcome`, `plots`, run on Dask or in this process) and calibration to thermocouple logs
(`fit`)."""

from .fit import Fit, fit_case, read_log
from .runner import StudyRun, run_study
from .spec import Study, load_study, parse_study

__all__ = [
    "Fit",
    "Study",
    "StudyRun",
    "fit_case",
    "load_study",
    "parse_study",
    "read_log",
    "run_study",
]
