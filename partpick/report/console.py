"""The terminal: a rich console that knows ``--quiet`` and ``--no-color``."""

from __future__ import annotations

import sys
from dataclasses import dataclass

from rich.console import Console
from rich.table import Table
from rich.text import Text

from partpick.errors import Problem


@dataclass
class Terminal:
    """Output for people (stdout) and for problems (stderr)."""

    out: Console
    err: Console
    quiet: bool = False

    def print(self, *objects, **kwargs) -> None:
        if not self.quiet:
            self.out.print(*objects, **kwargs)

    def always(self, *objects, **kwargs) -> None:
        self.out.print(*objects, **kwargs)

    def error(self, message: str) -> None:
        self.err.print(labelled("error:", "bold red", message), highlight=False, soft_wrap=True)

    def print_problems(self, problems: list[Problem]) -> None:
        for p in problems:
            self.err.print(str(p), markup=False, highlight=False, soft_wrap=True)
        count = f"{len(problems)} problem{'s' if len(problems) != 1 else ''}"
        self.err.print(labelled(count, "bold red", "in the input; nothing was chosen."), highlight=False)


def labelled(label: str, style: str, rest: str = "") -> Text:
    """A styled label followed by plain text; no markup is read from either.

    Names from the user's files (part numbers, suppliers, the spec name) reach
    the terminal as they are: a ``[`` in them is text, never a style tag.

    >>> labelled("warning:", "yellow", "[bold]X[/]").plain
    'warning: [bold]X[/]'
    """
    return Text.assemble((label, style), f" {rest}" if rest else "")


def make_console(no_color: bool = False, quiet: bool = False, width: int | None = None) -> Terminal:
    # markup=False: every string printed is plain text (user data may contain "[").
    kwargs = dict(no_color=no_color, highlight=False, soft_wrap=False, markup=False)
    if width is not None:
        kwargs["width"] = width
    if no_color:
        kwargs["color_system"] = None
    return Terminal(
        out=Console(file=sys.stdout, **kwargs), err=Console(file=sys.stderr, **kwargs), quiet=quiet
    )


def print_catalog_summary(term: Terminal, catalog) -> None:
    """Counts per category, suppliers and warnings of a validated catalogue."""
    t = Table(title=f"Catalogue {catalog.folder}", title_justify="left")
    t.add_column("category")
    t.add_column("rows", justify="right")
    t.add_column("details")
    tr = catalog.transistors
    pairs = int((tr["polarity"] == "npn").sum() and tr.loc[tr["polarity"] == "npn", "complement"].notna().sum())
    t.add_row(
        "transistors",
        str(len(tr)),
        f"{pairs} complement-listed pairs; {int(tr['soa_dc'].notna().sum())} devices with SOA curves; "
        f"packages {', '.join(sorted(set(tr['package'])))}",
    )
    op = catalog.opamps
    t.add_row("op-amps", str(len(op)), ", ".join(f"{(op['per_package'] == n).sum()} x{n}" for n in (1, 2, 4)))
    rg = catalog.regulators
    t.add_row("regulators", str(len(rg)), f"{(rg['kind'] == 'fixed').sum()} fixed, {(rg['kind'] == 'adjustable').sum()} adjustable")
    hs = catalog.heatsinks
    span = f"{hs['rth_sa_k_w'].min():g} to {hs['rth_sa_k_w'].max():g} K/W" if len(hs) else "none"
    t.add_row("heatsinks", str(len(hs)), span)
    pa = catalog.passives
    t.add_row("passive families", str(len(pa)), ", ".join(f"{(pa['kind'] == k).sum()} {k}" for k in sorted(set(pa["kind"]))))
    t.add_row("diodes", str(len(catalog.diodes)), ", ".join(sorted(set(catalog.diodes["kind"]))))
    t.add_row("offers", str(len(catalog.offers)), f"{catalog.offers['mpn'].nunique()} parts and families offered")
    term.print(t)
    s = Table(title="Suppliers", title_justify="left")
    s.add_column("supplier")
    s.add_column("order fee", justify="right")
    s.add_column("offers", justify="right")
    s.add_column("out of stock", justify="right")
    for row in catalog.suppliers.itertuples(index=False):
        mine = catalog.offers[catalog.offers["supplier"] == row.supplier]
        s.add_row(row.supplier, f"{row.order_fee:.2f} {row.currency}", str(len(mine)), str(int((mine["stock"] == 0).sum())))
    term.print(s)
    for w in catalog.warnings:
        term.print(labelled("warning:", "yellow", w))
    term.always(f"catalogue OK: {sum(len(f) for f in (tr, op, rg, hs, pa, catalog.diodes))} parts and families, {len(catalog.offers)} offers")
