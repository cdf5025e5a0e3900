"""Measured frequency responses: reading a bench sweep from CSV or whitespace-separated text.

A measurement file has a frequency column and a magnitude column (dB or linear V/V), optionally a
phase column (degrees or radians). What is read:

- separators: comma, semicolon, tab or white space, found from the data lines; decimal commas
  (``1,5;-3,2`` or ``1,5  -3,2``) where the separator is not a comma; quoted fields;
- comment lines starting with ``#``, ``;``, ``!``, ``%`` or ``//``, and blank lines, anywhere;
  text after ``#`` or ``!`` on a data line;
- header rows before the data: the last one names the columns, and the units in it are used
  (``Frequency (kHz)``, ``f/MHz``, ``gain_db``, ``Phase [rad]``, ``|H| (V/V)``); a header may also
  be the last comment line before the data;
- the typographic minus (U+2212) and non-breaking spaces.

When the file does not say which column is what, or in which unit, a :class:`ColumnMapping` says
it; :func:`read_measurement` guesses what can safely be guessed (frequency in the first column in
Hz, magnitude in dB when it has values at or below zero, phase in degrees when it exceeds ±2π) and
records each guess in :attr:`Measurement.notes`. What cannot be guessed raises
:class:`MappingNeeded`, which carries the scanned table for a column-mapping step.

Every error is a :class:`MeasurementError` (an :class:`~bandsmith.common.errors.InputError` on the field
``measured``) and names the line where it can.
"""

from __future__ import annotations

# The model and the sessions part are in measured_model, the readers in measured_read; they are
# re-exported here, where callers have always found them.
from bandsmith.bench.measured_model import (
    EXTRAS_KEY,
    FREQ_UNITS,
    MAG_UNITS,
    MIN_POINTS,
    PHASE_UNITS,
    ColumnMapping,
    MappingNeeded,
    Measurement,
    MeasurementError,
    TableScan,
    measurement_from_json,
    measurement_to_json,
    session_measurements,
    with_measurement,
)
from bandsmith.bench.measured_read import guess_mapping, read_measurement, scan_table

__all__ = [
    "MeasurementError",
    "MappingNeeded",
    "ColumnMapping",
    "TableScan",
    "Measurement",
    "scan_table",
    "guess_mapping",
    "read_measurement",
    "measurement_to_json",
    "measurement_from_json",
    "session_measurements",
    "with_measurement",
    "FREQ_UNITS",
    "MAG_UNITS",
    "PHASE_UNITS",
    "EXTRAS_KEY",
    "MIN_POINTS",
]
