"""The route of a long line in a study file (study layer, edge): profile, sections, boosters,
equipment and fittings.

- ``[[profile]]`` tables (``chainage``, ``elevation``, each with its unit) or
  ``profile = "ground.csv"`` (columns ``chainage_<unit>``, ``elevation_<unit>``, or units in
  every cell): the ground along the route (:class:`~pipeopt.profile.GroundProfile`);
- ``[[section]]`` tables: lines in series, each with its ``length`` (or the chainage where it
  ``end``-s), the ``materials`` it may be made of (names of the study's ``[[material]]``
  tables; default all) and the nominal ``sizes`` or diameter range it may take
  (:class:`LineSection`);
- ``[boosters]``: how many booster stations the optimizer may add, where, and their cost
  (:class:`~pipeopt.stations.Boosters`);
- ``[[equipment]]``: fixed losses given by a pressure drop at a flow
  (:class:`~pipeopt.losses.Equipment`);
- ``[fittings]``: fittings by count from the bundled table (:class:`~pipeopt.losses.Fittings`).

Every key has its rule and its message in the section's field specs; errors name the key path.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from .errors import InputError
from .fields import InputSection, quantity, text, texts
from .losses import Equipment, Fittings
from .studyfile import Section, StudyFileError

if TYPE_CHECKING:
    from .profile import GroundProfile

__all__ = ["LineSection", "read_route", "ROUTE_KEYS"]

#: Top-level keys of a sizing study file that describe a long line.
ROUTE_KEYS = ("profile", "section", "boosters", "equipment", "fittings")


@dataclass(frozen=True)
class LineSection(InputSection):
    """One section of a line built of sections in series (study file ``[[section]]``).

    Parameters
    ----------
    length : str or Quantity, optional
        Length of the section, e.g. ``"12 km"``. Or give ``end``.
    end : str or Quantity, optional
        Chainage where the section ends. The last section may give neither: it runs to the end
        of the line.
    materials : sequence of str, optional
        Names of the study's ``[[material]]`` tables the section may be made of (default: all).
    sizes : sequence of str, optional
        Nominal sizes it may take, e.g. ``["DN 500", "DN 600"]`` (default: every size of those
        materials within their own filters). Each size's classes are telescoped along it.
    min_diameter, max_diameter : str or Quantity, optional
        Range of the bore of a nominal size's lightest class.
    name : str, optional
        A label (default ``section 1``, ...).

    Examples
    --------
    >>> LineSection(length="12 km", sizes=["DN 600"]).length
    12000.0
    """

    SECTION = "section"
    length: float | None = quantity("length", low=0.0, low_open=True, default=None)
    end: float | None = quantity("length", default=None)
    materials: tuple = texts(default=())
    sizes: tuple = texts(default=())
    min_diameter: float | None = quantity("diameter", low=0.0, low_open=True, default=None)
    max_diameter: float | None = quantity("diameter", low=0.0, low_open=True, default=None)
    name: str | None = text(default=None)

    def _check(self, path: str) -> None:
        if self.length is not None and self.end is not None:
            raise InputError(f"{path}.end: give length or end, not both")
        if (self.min_diameter is not None and self.max_diameter is not None
                and self.min_diameter > self.max_diameter):
            raise InputError(f"{path}.min_diameter: must not exceed max_diameter")


def _read_profile(top: Section, base: Path) -> GroundProfile | None:
    raw = top.raw("profile")
    if raw is None:
        return None
    from .profile import GroundProfile  # the model layer, only for a file that has a route

    if isinstance(raw, str):
        try:
            return GroundProfile.read_csv(base / raw, name=f"profile file {raw!r}")
        except InputError as exc:
            raise StudyFileError(f"profile: {exc}") from None
    points = top.tables("profile", ("chainage", "elevation"))
    for p in points:
        p.required("chainage")
        p.required("elevation")
    return GroundProfile(tuple(p.raw("chainage") for p in points),
                         tuple(p.raw("elevation") for p in points))


def read_route(top: Section, base: Path) -> dict[str, Any]:
    """The long-line sections of a sizing study file, checked.

    Returns
    -------
    dict
        ``profile`` (GroundProfile or None), ``sections`` (tuple of LineSection), ``boosters``
        (Boosters or None), ``equipment`` (tuple of Equipment), ``fittings`` (Fittings or None).
    """
    boosters = None
    if top.has("boosters"):  # the model layer, only for a file that has booster stations
        from .stations import Boosters

        boosters = Boosters.read(top.table("boosters", Boosters.keys()))
    fittings = top.raw("fittings")
    return {
        "profile": _read_profile(top, base),
        "sections": tuple(LineSection.read(s) for s in
                          top.tables("section", LineSection.keys(), required=False)),
        "boosters": boosters,
        "equipment": tuple(Equipment.read(s) for s in
                           top.tables("equipment", Equipment.keys(), required=False)),
        "fittings": None if fittings is None else Fittings.parse(fittings, "fittings"),
    }
