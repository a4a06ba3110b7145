"""Plain-text tables (rich, no colour, ASCII rules) for the terminal and for files.

Every table icecolumn prints goes through :func:`text_table`: a header of column
names with an optional line of units below, a rule of dashes, the rows, and an
optional footer (e.g. totals) after a second rule.  The first column is left
aligned, the others right aligned; columns are two spaces apart and never wrap.
"""
from __future__ import annotations

from collections.abc import Sequence
from io import StringIO

from rich.box import Box
from rich.console import Console
from rich.table import Table
from rich.text import Text

__all__ = ["text_table"]

# Box lines: top, head, rule under the head, mid, row, rule over the footer, footer, bottom;
# each gives left edge, horizontal, divider, right edge.  Only the two rules are drawn.
_RULES_ONLY = Box("    \n    \n -- \n    \n    \n -- \n    \n    \n")


def text_table(columns: Sequence[tuple[str, str]], rows: Sequence[Sequence[str]],
               footer: Sequence[str] | None = None, title: str | None = None) -> str:
    """The table as text, newline-terminated.

    Parameters
    ----------
    columns : sequence of (name, unit)
        Column headings; a non-empty unit is written on a second header line.
    rows : sequence of sequence of str
        Cell texts, one sequence per row (already formatted).
    footer : sequence of str, optional
        One cell text per column, written after a rule (e.g. totals).
    title : str, optional
        A line written above the table.
    """
    with_units = any(unit for _, unit in columns)
    table = Table(box=_RULES_ONLY, show_edge=False, pad_edge=False, padding=(0, 1, 0, 0),
                  show_footer=footer is not None, header_style=None, footer_style=None, title_style=None)
    for j, (name, unit) in enumerate(columns):
        head = f"{name}\n{unit}" if with_units else name
        table.add_column(Text(head), justify="left" if j == 0 else "right", no_wrap=True,
                         footer=Text(footer[j]) if footer is not None else "")
    for row in rows:
        table.add_row(*(Text(cell) for cell in row))
    buffer = StringIO()
    Console(file=buffer, width=10_000, color_system=None, highlight=False, emoji=False, markup=False,
            legacy_windows=False, force_terminal=False, force_jupyter=False).print(table)
    lines = [line.rstrip() for line in buffer.getvalue().splitlines()]
    if title:
        lines.insert(0, title)
    return "\n".join(lines) + "\n"
