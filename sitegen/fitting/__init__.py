"""Stage 5: fitting the model to monitoring data (removals and an abundance index).

:func:`fit_scenario` fits a scenario's ``[data]`` (None without it);
:func:`fit_summary` and :func:`fit_text` present the :class:`FitReport`;
:func:`fit_entry` turns it into a companion-file entry.
"""

from sitegen.fitting.fit import fit_scenario
from sitegen.fitting.records import FitReport
from sitegen.fitting.summary import fit_entry, fit_summary, fit_text

__all__ = ["FitReport", "fit_entry", "fit_scenario", "fit_summary", "fit_text"]
