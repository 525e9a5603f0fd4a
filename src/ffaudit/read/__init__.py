"""Structure-library readers: one module per format, one entry point (:func:`iter_records`)."""

from ffaudit.read.open import FORMATS, detect_format, iter_records, iter_records_from_stream
from ffaudit.read.record import Record

__all__ = ["FORMATS", "Record", "detect_format", "iter_records", "iter_records_from_stream"]
