"""Where each element of a train sits on a schematic (Qt-free, shared by the
desktop canvas and the review sheet).

Discs get integer columns (left to right along the power flow) and rows (the
main line on row 0, every branch on a row of its own below).  The longest
line from an end disc runs straight across, as an engineer sketches a train.
Links in parallel between the same two discs get lanes, to be drawn side by side.
"""
from __future__ import annotations

from dataclasses import dataclass, field

from core.model import GROUND


@dataclass
class Placement:
    column: dict = field(default_factory=dict)  # disc id -> int
    row: dict = field(default_factory=dict)  # disc id -> int
    grounds: list = field(default_factory=list)  # (link id, disc id, side -1 left / +1 right)
    n_columns: int = 0
    n_rows: int = 0
    # links in parallel between the same two discs: link id -> (lane, lanes), lanes >= 2;
    # drawn side by side, lane 0 on top (see lane_offset)
    lanes: dict = field(default_factory=dict)

    def lane_offset(self, link_id, spacing: float) -> float:
        """Offset across the line for a link drawn in parallel with others, centred on the
        line between its discs: 0 for a link alone, else (lane - (lanes - 1) / 2) * spacing."""
        lane, lanes = self.lanes.get(link_id, (0, 1))
        return (lane - (lanes - 1) / 2.0) * spacing


def place(discs: list[str], links: list[tuple[str, str, str]]) -> Placement:
    """``discs``: ids in file order; ``links``: (link id, from id, to id).

    Works on documents that are not yet valid (unknown ids and loops are
    skipped), so the canvas can draw while the user is still editing.
    """
    known = set(discs)
    adj: dict[str, list[str]] = {d: [] for d in discs}
    grounded = []
    pairs: dict[frozenset, list] = {}  # links between each pair of discs, in file order
    for lid, a, b in links:
        if a == GROUND and b in known:
            grounded.append((lid, b))
        elif b == GROUND and a in known:
            grounded.append((lid, a))
        elif a in known and b in known and a != b:
            same = pairs.setdefault(frozenset((a, b)), [])
            same.append(lid)
            if len(same) == 1:  # links in parallel add no neighbour
                adj[a].append(b)
                adj[b].append(a)
    p = Placement()
    for same in pairs.values():
        if len(same) > 1:
            for i, lid in enumerate(same):
                p.lanes[lid] = (i, len(same))
    if not discs:
        return p
    seen: set[str] = set()

    def depth(start: str) -> dict[str, int]:
        # longest path below each node, iteratively (trains may have thousands of discs)
        order, parent, stack = [], {start: None}, [start]
        while stack:
            n = stack.pop()
            order.append(n)
            for m in adj[n]:
                if m not in parent:
                    parent[m] = n
                    stack.append(m)
        d = {}
        for n in reversed(order):
            d[n] = 1 + max((d[m] for m in adj[n] if parent.get(m) == n), default=0)
        return d

    next_row = 0
    for start in discs:
        if start in seen:
            continue
        # begin at an end disc of this connected part: the first leaf in file order
        comp = depth(start)
        leaves = [d for d in discs if d in comp and len(adj[d]) <= 1]
        root = leaves[0] if leaves else start
        below = depth(root)
        row0 = next_row
        next_row += 1
        stack = [(root, 0, row0)]
        while stack:
            node, col, row = stack.pop()
            if node in seen:
                continue
            seen.add(node)
            p.column[node], p.row[node] = col, row
            kids = [m for m in adj[node] if m not in seen]
            kids.sort(key=lambda m: -below.get(m, 0))
            for i, kid in enumerate(reversed(kids)):
                j = len(kids) - 1 - i
                if j == 0:
                    stack.append((kid, col + 1, row))
                else:
                    stack.append((kid, col + 1, None))
            # rows for branches are handed out when they are popped
            for k, item in enumerate(stack):
                if item[2] is None:
                    stack[k] = (item[0], item[1], next_row)
                    next_row += 1
    for lid, d in grounded:
        left_taken = any(p.row.get(o) == p.row[d] and p.column.get(o) == p.column[d] - 1 for o in adj[d])
        p.grounds.append((lid, d, +1 if left_taken or p.column[d] > 0 else -1))
    p.n_columns = 1 + max(p.column.values())
    p.n_rows = next_row
    return p


def place_document(doc: dict) -> Placement:
    discs = [d.get("id") for d in doc.get("discs", []) if isinstance(d, dict) and isinstance(d.get("id"), str)]
    links = [(l.get("id"), l.get("from"), l.get("to")) for l in doc.get("links", []) if isinstance(l, dict)]
    return place(discs, links)
