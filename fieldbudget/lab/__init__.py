"""The laboratory: its equipment register, its archive of records and the monitoring of its results.

A laboratory is a folder shared by its staff (``--lab DIR`` or the
``FIELDBUDGET_LAB`` environment variable):

``register/``
    one TOML or JSON file per instrument, with its calibration certificates
    (:mod:`fieldbudget.lab.register`, ISO/IEC 17025:2017 6.4);
``archive/``
    the records, read-only, an SQLite index and the chained log of additions
    (:mod:`fieldbudget.lab.archive`, ISO/IEC 17025:2017 7.5 and 7.11.3);
``settings.toml``
    the laboratory's settings; this package reads the ``[register]`` and
    ``[monitoring.<series>]`` tables (:mod:`fieldbudget.lab.monitoring`,
    ISO/IEC 17025:2017 7.7.1).

This layer reads records (:mod:`fieldbudget.files`) and knows nothing of
widgets or plotting.
"""

from __future__ import annotations

from .folder import LAB_ENV, LabFolder, lab_folder

__all__ = ["LAB_ENV", "LabFolder", "lab_folder"]
