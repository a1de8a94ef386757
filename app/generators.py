"""Starting shapes as ordinary schemes (no Qt): a multi-bay, multi-storey frame and
parallel-chord trusses of the common panel patterns.  The app inserts them as editable
members under fresh ids (:func:`kinestat.app.edits.insert`)."""
from __future__ import annotations

from kinestat.core.model import Member, Node, Scheme, Support

#: panel patterns: name -> words for the menu
TRUSS_PATTERNS = {
    "pratt": "Pratt (verticals; diagonals fall towards mid-span)",
    "howe": "Howe (verticals; diagonals rise towards mid-span)",
    "warren": "Warren (alternating diagonals, no verticals)",
    "warren_verticals": "Warren with verticals",
}


def frame(bays: int, storeys: int, bay: float = 6.0, storey: float = 3.5, base: str = "fixed") -> Scheme:
    """A rigid-jointed frame of ``bays`` x ``storeys`` with beams and columns; ``base`` is
    "fixed", "pin" or "none"."""
    if bays < 1 or storeys < 1:
        raise ValueError("a frame needs at least one bay and one storey")
    if bay <= 0 or storey <= 0:
        raise ValueError("bay width and storey height must be positive")
    s = Scheme()
    nid = lambda i, j: f"n{i}_{j}"  # noqa: E731
    for i in range(bays + 1):
        for j in range(storeys + 1):
            s = s.with_node(Node(nid(i, j), i * bay, j * storey))
    k = 0
    for i in range(bays + 1):
        for j in range(storeys):
            k += 1
            s = s.with_member(Member(f"c{k}", nid(i, j), nid(i, j + 1), "beam"))
    for j in range(1, storeys + 1):
        for i in range(bays):
            k += 1
            s = s.with_member(Member(f"b{k}", nid(i, j), nid(i + 1, j), "beam"))
    if base in ("fixed", "pin"):
        for i in range(bays + 1):
            s = s.with_support(Support(nid(i, 0), base, 90.0))
    elif base != "none":
        raise ValueError(f"unknown base {base!r}")
    return s


def truss(pattern: str, span: float, depth: float, panels: int, supports: bool = True) -> Scheme:
    """A parallel-chord truss of pin-ended bars; a pin at the left end, a roller at the right.

    ``panels`` is the number of bottom-chord panels (even for Pratt and Howe so that the
    diagonals mirror about mid-span).
    """
    if pattern not in TRUSS_PATTERNS:
        raise ValueError(f"unknown truss pattern {pattern!r} (one of {', '.join(TRUSS_PATTERNS)})")
    if panels < 1:
        raise ValueError("a truss needs at least one panel")
    if span <= 0 or depth <= 0:
        raise ValueError("span and depth must be positive")
    w = span / panels
    s = Scheme()
    bars: list[tuple[str, str]] = []
    bot = [f"b{i}" for i in range(panels + 1)]
    for i, n in enumerate(bot):
        s = s.with_node(Node(n, i * w, 0.0))
    bars += [(bot[i], bot[i + 1]) for i in range(panels)]
    if pattern == "warren":
        top = [f"t{i}" for i in range(panels)]
        for i, n in enumerate(top):
            s = s.with_node(Node(n, (i + 0.5) * w, depth))
        bars += [(top[i], top[i + 1]) for i in range(panels - 1)]
        for i in range(panels):
            bars += [(bot[i], top[i]), (top[i], bot[i + 1])]
    else:  # parallel chords with verticals
        top = [f"t{i}" for i in range(panels + 1)]
        for i, n in enumerate(top):
            s = s.with_node(Node(n, i * w, depth))
        bars += [(top[i], top[i + 1]) for i in range(panels)]
        bars += [(bot[i], top[i]) for i in range(panels + 1)]
        for i in range(panels):
            left_half = (i + 0.5) < panels / 2
            falling = (top[i], bot[i + 1])  # from the top on the left down to the right
            rising = (bot[i], top[i + 1])
            if pattern == "pratt":
                # diagonals run from the top at the outer side down towards mid-span
                bars.append(falling if left_half else rising)
            elif pattern == "howe":
                bars.append(rising if left_half else falling)
            else:  # warren with verticals: alternate
                bars.append(rising if i % 2 == 0 else falling)
    for k, (a, b) in enumerate(bars, start=1):
        s = s.with_member(Member(f"m{k}", a, b, "bar"))
    if supports:
        s = s.with_support(Support(bot[0], "pin", 90.0)).with_support(Support(bot[-1], "roller", 90.0))
    return s
