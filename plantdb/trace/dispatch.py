"""Dispatcher answers, all drawn from the same walk and kept circuit paths as the trace."""

from __future__ import annotations

from plantdb.trace.impact import impact_document
from plantdb.trace.live import live_document
from plantdb.trace.locate import locate_document

__all__ = ["impact_document", "live_document", "locate_document"]
