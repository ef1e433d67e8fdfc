"""The uncertainty budget of a calculation as a table and its notes (``prepbook calc``).

Imported only when a budget is printed as text, so ``--json`` loads no more than it needs.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

from prepbook.cli import output

if TYPE_CHECKING:
    from prepbook.chem.uncertainty import BudgetLine


def budget_row(line: BudgetLine) -> tuple[str, ...]:
    value = f"{output.sig(line.value, 6)} {'' if line.unit == '1' else line.unit}".strip()
    if line.missing is not None:  # a term that belongs here but was not evaluated
        return (line.quantity, value, "missing", "missing", "missing", "-")
    return (
        line.quantity,
        value,
        output.sig(line.u, 2),
        "-" if line.u_relative is None else f"{line.u_relative * 100:.3f} %",
        output.sig(line.contribution, 2),
        f"{line.share_percent:.1f} %",
    )


def budget_table(budget: Sequence[BudgetLine], unit: str = "eq/L") -> object:
    return output.table(
        "Uncertainty budget (GUM)",
        ["quantity", "value", "u", "u (rel.)", f"contrib. ({unit})", "share"],
        [budget_row(line) for line in budget],
        right=(1, 2, 3, 4, 5),
    )


def uncertainty(out: Any, u: float | None, big_u: float | None, k: float | None,
                budget: Sequence[BudgetLine]) -> None:
    """The combined and expanded uncertainty, the gaps named, and the budget."""
    gaps = [line.quantity for line in budget if line.missing is not None]
    out.print(
        f"u = {output.sig(u, 2)} eq/L, U = {output.sig(big_u, 2)} eq/L "
        f"(k = {k:g})" + (f", incomplete: {', '.join(gaps)} missing" if gaps else "")
    )
    out.print(budget_table(budget))
