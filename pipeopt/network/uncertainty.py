"""Uncertainty of a network design's life-cycle cost (study layer)."""

from __future__ import annotations

from typing import Any

from ..studyfile import StudyFileError


def read_network_uncertainty(data: Any, study: Any) -> dict:
    raise StudyFileError("uncertainty: not supported in a network study yet (run the study "
                         "with each value of interest instead)")
