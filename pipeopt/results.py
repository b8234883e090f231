"""The result protocol every study result follows (study layer), and the shared caution.

A result has ``success`` and ``message``, its tables as attributes (pandas DataFrames with units
in the column names), :meth:`StudyResult.text` for the full plain-text summary (also what
``str(result)`` and ``print(result)`` give), a one-line ``repr`` and an HTML form for notebooks.
"""

from __future__ import annotations

import abc
import html

import pandas as pd

__all__ = ["StudyResult", "CAUTION", "html_table"]

#: The caution every summary and report carries.
CAUTION = ("An engineering-economics study that supports, and does not replace, a design: the "
           "pressure check and the Joukowsky surge screen do not replace a transient analysis; "
           "pressure, surge and structural questions need a qualified engineer, and local codes "
           "and licensed engineering practice govern.")


def html_table(frame: pd.DataFrame, digits: int = 4) -> str:
    """A DataFrame as an HTML table with numbers to ``digits`` significant figures."""
    return frame.to_html(index=False, border=0, float_format=lambda x: f"{x:,.{digits}g}",
                         na_rep="-")


class StudyResult(abc.ABC):
    """Base of the result objects: ``success``, ``message``, ``text()``, one-line repr, HTML."""

    success: bool
    message: str

    @abc.abstractmethod
    def text(self) -> str:
        """The full plain-text summary."""

    @abc.abstractmethod
    def headline(self) -> str:
        """The outcome in one line (for the repr)."""

    def tables(self) -> dict[str, pd.DataFrame]:
        """The result's tables by name (for reports and the HTML form)."""
        return {}

    def __str__(self) -> str:
        return self.text()

    def __repr__(self) -> str:
        return f"<{type(self).__name__}: {self.headline()}>"

    def _repr_html_(self) -> str:
        body = html.escape(self.text()).replace("\n", "<br>")
        parts = [f"<div class='pipeopt-result'><p style='font-family:monospace'>{body}</p>"]
        for name, frame in self.tables().items():
            parts.append(f"<p><b>{html.escape(name)}</b></p>{html_table(frame.head(12))}")
        parts.append("</div>")
        return "".join(parts)
