"""The schematic of the train: discs, shafts, couplings, gear meshes, ground.

Positions come from :func:`app.schematic_layout.place_document` (shared with
the review sheet).  Drawing conventions of this program:

* disc: upright block, height on a log scale of its inertia within the train;
  name above, inertia below (in the chosen unit system);
* shaft: a line whose weight grows with log stiffness; a shaft with
  distributed inertia is drawn as a double line, one with lumped inertia
  carries a small dot at mid-span;
* coupling: two flange bars with a spring zig-zag between them;
* gear mesh: two touching pitch circles, the speed ratio written beside;
* ground: a hatched support block;
* links in parallel between the same two discs: side by side, each on its own lane.

The canvas draws documents that do not build yet (unknown values get a
neutral size) so the user sees the train while still typing.
"""
from __future__ import annotations

import math

from PySide6 import QtCore, QtGui, QtWidgets

from core import units as u
from core.model import GROUND

from . import theme
from .quantities import pretty_unit, read_si, short_quantity  # noqa: F401
from ..schematic_layout import place_document


def mesh_ratio(link: dict) -> float:
    """A gear mesh's speed ratio as drawn: its speed_ratio, or z_from / z_to of its teeth
    (1 while the entry is not yet readable)."""
    teeth = link.get("teeth")
    try:
        if isinstance(teeth, list) and len(teeth) == 2 and link.get("speed_ratio") is None:
            return float(teeth[0]) / float(teeth[1])
        return float(u.parse_number(link.get("speed_ratio")))
    except Exception:
        return 1.0


def mesh_ratio_text(link: dict) -> str:
    """The ratio as the user gave it: '3.1', or '98/40' from tooth counts."""
    teeth = link.get("teeth")
    if isinstance(teeth, list) and len(teeth) == 2 and link.get("speed_ratio") is None:
        return f"{teeth[0]}/{teeth[1]}"
    return str(link.get("speed_ratio"))

COL_W = 140.0  # scene units between disc columns
ROW_H = 200.0
LANE_H = 64.0  # scene units between links drawn in parallel (room for a mesh's pitch circles)
DISC_W = 22.0
DISC_H_MIN, DISC_H_MAX = 22.0, 84.0
PEN_MIN, PEN_MAX = 1.2, 6.0
LABEL_W = COL_W - 12


_FONT_CACHE: dict = {}


def _small_font() -> QtGui.QFont:
    """The labels' font, made once (a QFont per label costs more than the label)."""
    if "font" not in _FONT_CACHE:
        _FONT_CACHE["font"] = theme.font(theme.SMALL_POINT_SIZE)
        _FONT_CACHE["metrics"] = QtGui.QFontMetricsF(_FONT_CACHE["font"])
    return _FONT_CACHE["font"]


def _small_metrics() -> QtGui.QFontMetricsF:
    _small_font()
    return _FONT_CACHE["metrics"]


def _si(value, kind):
    return read_si(value, kind)


def _log_scale(values: dict, lo_out: float, hi_out: float) -> dict:
    """Map positive values to [lo_out, hi_out] by log10 within their own range."""
    good = {k: v for k, v in values.items() if v is not None and v > 0 and math.isfinite(v)}
    if not good:
        return {k: (lo_out + hi_out) / 2 for k in values}
    lo, hi = math.log10(min(good.values())), math.log10(max(good.values()))
    span = hi - lo
    out = {}
    for k, v in values.items():
        if k not in good:
            out[k] = lo_out
        elif span < 1e-9:
            out[k] = (lo_out + hi_out) / 2
        else:
            out[k] = lo_out + (hi_out - lo_out) * (math.log10(good[k]) - lo) / span
    return out


def link_stiffness_si(link: dict):
    """Given stiffness, or the series stiffness of the segments (None if unknown)."""
    k = _si(link.get("stiffness"), u.STIFFNESS) if link.get("stiffness") is not None else None
    if k is not None or link.get("kind") != "shaft" or not link.get("segments"):
        return k
    from core.materials import LIBRARY
    mat = link.get("material")
    G = LIBRARY[mat].shear_modulus if isinstance(mat, str) and mat in LIBRARY else (
        _si(mat.get("shear_modulus"), u.MODULUS) if isinstance(mat, dict) else None)
    if not G:
        return None
    flex = 0.0
    for s in link.get("segments") or []:
        if not isinstance(s, dict):
            return None
        L, D = _si(s.get("length"), u.LENGTH), _si(s.get("outer_diameter"), u.LENGTH)
        d = _si(s.get("inner_diameter", 0), u.LENGTH) or 0.0
        if not L or not D or d >= D:
            return None
        flex += L / (G * math.pi * (D ** 4 - d ** 4) / 32.0)
    return 1.0 / flex if flex > 0 else None


class TrainCanvas(QtWidgets.QGraphicsView):
    """Signals ``selectionMade((kind, id) or None)`` on a click."""

    selectionMade = QtCore.Signal(object)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setScene(QtWidgets.QGraphicsScene(self))
        self.setRenderHints(QtGui.QPainter.Antialiasing | QtGui.QPainter.TextAntialiasing)
        self.setBackgroundBrush(theme.qcolor(theme.BACKGROUND))
        self.setDragMode(QtWidgets.QGraphicsView.ScrollHandDrag)
        self.setTransformationAnchor(QtWidgets.QGraphicsView.AnchorUnderMouse)
        self.setMinimumSize(320, 170)
        self.setToolTip("")
        self._items: dict = {}  # (kind, id) -> main graphics item
        self._disc_brush: dict = {}
        self._disc_pen: dict = {}  # (kind, id) -> the disc's pen when not selected
        self._selection = None
        self._shown_selection = None  # the key drawn as selected
        self._shape = None
        self._shown_fill: dict = {}  # disc key -> fill colour applied (rgb) or None (plain)
        self._signature = None
        self._labels = []
        # incremental redraw: what each element was drawn from, and the scene items drawn
        self._drawn_from: dict = {}  # (kind, id) -> signature of its drawing
        self._element_items: dict = {}  # (kind, id) -> top-level scene items
        self._element_labels: dict = {}  # (kind, id) -> label records
        self._label_fit = None  # (column px, stagger, widest) the labels were elided for
        self._placement_key = self._placement = None
        self._halos: dict = {}  # link key -> glow items drawn behind the selected link
        self._disc_centre: dict = {}  # disc key -> (x, y) of its block's centre
        self._width_items: dict = {}  # link key -> [(item, pen role, colour)] drawn with the stiffness weight
        self.context_actions: list = []
        self._press_pos = None
        self._names: dict = {}  # disc id -> name shown
        self._lane_offset: dict = {}  # link id -> offset of its lane (links in parallel)

    # ---------------------------------------------------------------- drawing
    def set_document(self, doc: dict, system: str = "SI", error_elements=()) -> None:
        """Draw ``doc``.  Only elements whose drawing changed are redrawn (a value
        edit on a 200-disc train touches one or two elements, not 2000 items);
        each element's signature is its own dict, its position, its size on the
        log scales, its error mark and the unit system."""
        scene = self.scene()
        self.system = system
        placement = self._place(doc)
        discs = [d for d in doc.get("discs", []) if isinstance(d, dict) and isinstance(d.get("id"), str)]
        links = [l for l in doc.get("links", []) if isinstance(l, dict)]
        heights = _log_scale({d["id"]: _si(d.get("inertia"), u.INERTIA) for d in discs},
                             DISC_H_MIN, DISC_H_MAX)
        widths = _log_scale({l.get("id"): link_stiffness_si(l) for l in links if l.get("kind") != "gear_mesh"},
                            PEN_MIN, PEN_MAX)
        pos = {}
        for d in discs:
            if d["id"] in placement.column:
                pos[d["id"]] = (placement.column[d["id"]] * COL_W, placement.row[d["id"]] * ROW_H)
        ground_side = {lid: side for lid, _d, side in placement.grounds}
        self._lane_offset = {lid: placement.lane_offset(lid, LANE_H) for lid in placement.lanes}
        bad = set(error_elements)
        self._names = {d["id"]: str(d.get("name") or d["id"]) for d in discs}

        wanted = {}  # key -> (signature, draw function)
        for l in links:
            key = ("link", l.get("id"))
            sig = ((repr(l), pos.get(l.get("from")), pos.get(l.get("to")),
                    ground_side.get(l.get("id")), self._lane_offset.get(l.get("id")),
                    f"link '{l.get('id')}'" in bad, system,
                    self._names.get(l.get("from")), self._names.get(l.get("to"))), widths.get(l.get("id")))
            wanted.setdefault(key, []).append((sig, l))
        for d in discs:
            if d["id"] not in pos:
                continue
            key = ("disc", d["id"])
            sig = ((repr(d), pos[d["id"]], f"disc '{d['id']}'" in bad, system), heights[d["id"]])
            wanted.setdefault(key, []).append((sig, d))

        # (drawing, size) per element: a new size on the log scale (another element's
        # edit moved the end of the range) is set in place, anything else is redrawn
        stale = []
        for key, drawn in self._drawn_from.items():
            now = [sig for sig, _e in wanted.get(key, ())]
            if now == drawn:
                continue
            if len(now) == len(drawn) == 1 and now[0][0] == drawn[0][0]:
                self._resize(key, now[0][1])
                drawn[0] = now[0]
            else:
                stale.append(key)
        for key in stale:
            self._remove_element(key)
        redrawn, qpos = [], None
        for key, entries in wanted.items():
            if key in self._drawn_from:
                continue
            self._drawn_from[key] = [s for s, _e in entries]
            self._element_items[key], self._element_labels[key] = [], []
            for _sig, element in entries:  # the same id twice (while typing): draw both
                if key[0] == "link":
                    if qpos is None:
                        qpos = {k: QtCore.QPointF(*v) for k, v in pos.items()}
                    self._draw_link(element, qpos, heights, widths, ground_side,
                                    f"link '{key[1]}'" in bad)
                else:
                    self._draw_disc(element, QtCore.QPointF(*pos[key[1]]), heights[key[1]],
                                    f"disc '{key[1]}'" in bad)
            redrawn.append(key)
        self._labels = [rec for recs in self._element_labels.values() for rec in recs]
        if stale or redrawn:
            scene.setSceneRect(scene.itemsBoundingRect().adjusted(-COL_W, -36, COL_W, 36))
        signature = (placement.n_columns, placement.n_rows)
        if signature != self._signature:
            self._signature = signature
            self.fit()
        self._relabel(only=[rec for k in redrawn for rec in self._element_labels[k]])
        self._apply_selection(redrawn)
        self._apply_shape(redrawn)

    def _place(self, doc: dict):
        """place_document, cached on the topology (ids and ends) it depends on."""
        key = (tuple(d.get("id") for d in doc.get("discs", []) if isinstance(d, dict)),
               tuple((l.get("id"), l.get("from"), l.get("to")) for l in doc.get("links", [])
                     if isinstance(l, dict)))
        if key != self._placement_key:
            self._placement_key, self._placement = key, place_document(doc)
        return self._placement

    def _resize(self, key, size) -> None:
        """A disc's height or a link's line weight, changed in place."""
        if key[0] == "disc":
            item, (x, y) = self._items.get(key), self._disc_centre.get(key, (None, None))
            if item is not None and x is not None:
                item.setRect(QtCore.QRectF(x - DISC_W / 2, y - size / 2, DISC_W, size))
            return
        width = 2.0 if size is None else size
        for item, role, color in self._width_items.get(key, ()):
            item.setPen(self._width_pen(role, color, width))

    @staticmethod
    def _width_pen(role: str, color, width: float) -> QtGui.QPen:
        """Pens whose weight shows the stiffness: the line itself, or the outer ink and
        white core of a shaft with distributed inertia (drawn as a hollow tube)."""
        if role == "main":
            pen = QtGui.QPen(color, width)
            pen.setCapStyle(QtCore.Qt.FlatCap)
            return pen
        outer = max(width + 4.0, 6.0)
        if role == "outer":
            return QtGui.QPen(color, outer, QtCore.Qt.SolidLine, QtCore.Qt.FlatCap)
        return QtGui.QPen(QtGui.QColor("white"), outer - 3.0, QtCore.Qt.SolidLine, QtCore.Qt.FlatCap)

    def _remove_element(self, key) -> None:
        scene = self.scene()
        for item in self._element_items.pop(key, []) + self._halos.pop(key, []):
            scene.removeItem(item)
        self._element_labels.pop(key, None)
        self._drawn_from.pop(key, None)
        self._items.pop(key, None)
        self._disc_brush.pop(key, None)
        self._disc_pen.pop(key, None)
        self._shown_fill.pop(key, None)
        self._disc_centre.pop(key, None)
        self._width_items.pop(key, None)
        if self._shown_selection == key:
            self._shown_selection = None

    def clear_drawing(self) -> None:
        """Forget everything drawn (a new document: the next set_document draws afresh)."""
        self.scene().clear()
        for d in (self._items, self._disc_brush, self._disc_pen, self._shown_fill, self._drawn_from,
                  self._element_items, self._element_labels, self._disc_centre, self._width_items,
                  self._halos):
            d.clear()
        self._labels = []
        self._label_fit = None
        self._shown_selection = None
        self._placement_key = self._placement = None

    def _label(self, text: str, color, x: float, y: float, above: bool, key, column: int = 0):
        """A label that keeps its size on screen whatever the zoom; elided to
        the column width on screen by :meth:`_relabel`."""
        item = QtWidgets.QGraphicsSimpleTextItem()
        item.setFont(_small_font())
        item.setBrush(theme.qcolor(color))
        item.setFlag(QtWidgets.QGraphicsItem.ItemIgnoresTransformations)
        # painted once into a pixmap: a 200-disc train has 400 labels, and the schematic
        # repaints whole whenever the mode colours change (every re-solve)
        item.setCacheMode(QtWidgets.QGraphicsItem.DeviceCoordinateCache)
        item.setPos(x, y)
        item.setData(0, key)
        item.setToolTip(text)
        self.scene().addItem(item)
        record = (item, text, above, column, _small_metrics().horizontalAdvance(text))
        self._element_labels.setdefault(key, []).append(record)
        self._element_items.setdefault(key, []).append(item)
        return item

    def _relabel(self, only=None) -> None:
        """Elide labels to the column width on screen; when columns get narrow,
        stagger odd columns by one text line so each label has two columns' room.
        ``only``: the labels just drawn, when the zoom and stagger are unchanged
        (the others are elided right already)."""
        scale = self.transform().m11() or 1.0
        col_px = COL_W * scale
        fm = _small_metrics()
        widest = max((rec[4] for rec in self._labels), default=0.0)
        stagger = widest > col_px - 8
        fit = (col_px, stagger)
        labels = self._labels if only is None or fit != self._label_fit else only
        self._label_fit = fit
        max_w = max(40.0, (2 * col_px if stagger else col_px) - 10)
        line = fm.height()
        for item, text, above, column, advance in labels:
            item.setText(text if advance <= max_w else fm.elidedText(text, QtCore.Qt.ElideRight, max_w))
            r = item.boundingRect()
            shift = line if stagger and column % 2 else 0.0
            dy = -r.height() - shift if above else shift
            item.setTransform(QtGui.QTransform.fromTranslate(-r.width() / 2, dy))

    def _draw_disc(self, d: dict, p: QtCore.QPointF, h: float, bad: bool):
        rect = QtCore.QRectF(p.x() - DISC_W / 2, p.y() - h / 2, DISC_W, h)
        item = self.scene().addRect(rect)
        key = ("disc", d["id"])
        self._disc_centre[key] = (p.x(), p.y())
        item.setData(0, key)
        item.setZValue(2)
        pen = QtGui.QPen(theme.qcolor(theme.FAIL if bad else theme.INK), 2.0 if bad else 1.2)
        item.setPen(pen)
        self._disc_pen[key] = pen
        brush = QtGui.QBrush(theme.qcolor("#c9d6e3"))
        item.setBrush(brush)
        name = str(d.get("name") or d["id"])
        value = short_quantity(d.get("inertia"), u.INERTIA, self.system)
        tip = f"<b>{name}</b> (disc '{d['id']}')<br>inertia {value}"
        if value != str(d.get("inertia")):
            tip += f" (stored as {d.get('inertia')!s})"
        if d.get("damping") is not None:
            tip += f"<br>damping to ground {short_quantity(d.get('damping'), u.DAMPING, self.system)}"
        item.setToolTip(tip + "<br>Click to select; right-click to insert or delete.")
        self._items[key] = item
        self._element_items.setdefault(key, []).append(item)
        self._disc_brush[key] = brush
        col = int(round(p.x() / COL_W))
        self._label(name, theme.INK, p.x(), p.y() - DISC_H_MAX / 2 - 4, True, key, col)
        self._label(value, theme.FAIL if bad else theme.INK_MUTED, p.x(), p.y() + DISC_H_MAX / 2 + 4, False,
                    key, col)

    def _draw_link(self, l: dict, pos: dict, heights: dict, widths: dict, ground_side: dict, bad: bool):
        lid, kind = l.get("id"), l.get("kind")
        a, b = l.get("from"), l.get("to")
        key = ("link", lid)
        color = theme.qcolor(theme.FAIL if bad else theme.INK)
        width = widths.get(lid, 2.0)
        group = QtWidgets.QGraphicsItemGroup()
        self.scene().addItem(group)
        self._element_items.setdefault(key, []).append(group)
        group.setData(0, key)
        group.setZValue(1)
        if GROUND in (a, b):
            disc = b if a == GROUND else a
            if disc not in pos:
                return
            side = ground_side.get(lid, 1)
            p = pos[disc]
            x0 = p.x() + side * DISC_W / 2
            x1 = p.x() + side * (COL_W * 0.45)
            path = [QtCore.QPointF(x0, p.y()), QtCore.QPointF(x1, p.y())]
            self._link_body(group, kind, l, path, width, color)
            self._ground(group, x1, p.y(), side, color)
        else:
            if a not in pos or b not in pos:
                return
            pa, pb = pos[a], pos[b]
            if pb.x() < pa.x():
                pa, pb = pb, pa
            start = QtCore.QPointF(pa.x() + DISC_W / 2, pa.y())
            end = QtCore.QPointF(pb.x() - DISC_W / 2, pb.y())
            off = self._lane_offset.get(lid, 0.0)
            same_row = abs(pa.y() - pb.y()) < 1e-6
            xm = start.x() + 14
            if not off:
                path = [start, end] if same_row else [  # branch: across, down to its row, across
                    start, QtCore.QPointF(xm, pa.y()), QtCore.QPointF(xm, pb.y()), end]
                run = len(path) - 2
            else:  # in parallel with other links: its own lane, off the line between the discs
                y = pb.y() + off
                head = [start, QtCore.QPointF(xm, pa.y())] if same_row else [
                    start, QtCore.QPointF(xm, pa.y()), QtCore.QPointF(xm, pb.y())]
                xe = end.x() - 14
                path = head + [QtCore.QPointF(xm, y), QtCore.QPointF(xe, y), QtCore.QPointF(xe, pb.y()), end]
                run = len(head)
            self._link_body(group, kind, l, path, width, color, run)
        tip = self._link_tooltip(l, self._names)
        for child in group.childItems():
            child.setData(0, key)
            child.setToolTip(tip)
        group.setToolTip(tip)
        self._items[key] = group

    def _link_tooltip(self, l: dict, names: dict) -> str:
        """Names over ids (a link's name, else its id; the end discs' names), values in the
        unit system on screen with the stored text beside them."""
        kind = l.get("kind")
        lid = l.get("id")
        title = f"<b>{l.get('name')}</b> (link '{lid}')" if l.get("name") else f"<b>{lid}</b>"
        ends = [GROUND if e == GROUND else names.get(e, e) for e in (l.get("from"), l.get("to"))]
        rows = [f"{title}: {str(kind).replace('_', ' ')} from {ends[0]} (input) to {ends[1]} (output)"]

        def quantity(label, value):
            shown = short_quantity(value, u.STIFFNESS, self.system)
            rows.append(f"{label} {shown}" + (f" (stored as {value})" if shown != str(value) else ""))

        if kind == "gear_mesh":
            rows.append(f"speed ratio (output / input) = speed of '{ends[1]}' / speed of '{ends[0]}' "
                        f"= {mesh_ratio_text(l)}")
            if l.get("stiffness") is not None:
                quantity("mesh stiffness", l.get("stiffness"))
            else:
                rows.append("rigid mesh")
        else:
            k = link_stiffness_si(l)
            if l.get("stiffness") is not None:
                quantity("stiffness", l.get("stiffness"))
            elif k is not None:
                rows.append(f"stiffness from geometry {short_quantity(k, u.STIFFNESS, self.system)}")
            if l.get("mass") in ("lumped", "distributed"):
                rows.append(f"shaft inertia {l.get('mass')}")
        return "<br>".join(rows)

    def _polyline(self, group, pts, pen):
        path = QtGui.QPainterPath(pts[0])
        for q in pts[1:]:
            path.lineTo(q)
        item = QtWidgets.QGraphicsPathItem(path)
        item.setPen(pen)
        group.addToGroup(item)
        return item

    def _link_body(self, group, kind, l, pts, width, color, run=None):
        """The link's line through ``pts``, its symbol on the segment ``run`` (default the last)."""
        key = ("link", l.get("id"))
        weighted = self._width_items.setdefault(key, [])

        def weighted_line(points, role):  # a line whose weight shows the stiffness (see _resize)
            weighted.append((self._polyline(group, points, self._width_pen(role, color, width)), role, color))

        thin = QtGui.QPen(color, 1.3)
        run = len(pts) - 2 if run is None else run
        last_a, last_b = pts[run], pts[run + 1]
        mid = QtCore.QPointF((last_a.x() + last_b.x()) / 2, last_b.y())
        if kind == "shaft":
            if l.get("mass") == "distributed":
                # a hollow tube: wide ink line with a white core reads as a double line
                weighted_line(pts, "outer")
                weighted_line(pts, "inner")
            else:
                weighted_line(pts, "main")
                if l.get("mass") == "lumped":
                    dot = QtWidgets.QGraphicsEllipseItem(mid.x() - 4, mid.y() - 4, 8, 8)
                    dot.setBrush(color)
                    dot.setPen(QtGui.QPen(QtCore.Qt.NoPen))
                    group.addToGroup(dot)
        elif kind == "coupling":
            gap = 26.0
            x0, x1 = mid.x() - gap / 2, mid.x() + gap / 2
            weighted_line(pts[:run + 1] + [QtCore.QPointF(x0, mid.y())], "main")
            weighted_line([QtCore.QPointF(x1, mid.y())] + pts[run + 1:], "main")
            y = mid.y()
            for x in (x0, x1):  # flange bars
                bar = QtWidgets.QGraphicsLineItem(x, y - 11, x, y + 11)
                bar.setPen(QtGui.QPen(color, 2.6))
                group.addToGroup(bar)
            zig = [QtCore.QPointF(x0, y)]
            n = 6
            for i in range(1, n):
                zig.append(QtCore.QPointF(x0 + gap * i / n, y + (-6 if i % 2 else 6)))
            zig.append(QtCore.QPointF(x1, y))
            self._polyline(group, zig, thin)
        else:  # gear mesh: two touching pitch circles
            self._polyline(group, pts, QtGui.QPen(color, 1.6, QtCore.Qt.DotLine))
            ratio = mesh_ratio(l)
            r1 = 12.0
            r2 = max(5.0, min(18.0, r1 / ratio)) if ratio > 0 else r1
            cx = mid.x()
            top = QtWidgets.QGraphicsEllipseItem(cx - r1, mid.y() - 2 * r1, 2 * r1, 2 * r1)
            bottom = QtWidgets.QGraphicsEllipseItem(cx - r2, mid.y(), 2 * r2, 2 * r2)
            for c in (top, bottom):
                c.setPen(QtGui.QPen(color, 1.8))
                c.setBrush(theme.qcolor(theme.BACKGROUND))
                group.addToGroup(c)
            txt = QtWidgets.QGraphicsSimpleTextItem(f"×{mesh_ratio_text(l)}")
            txt.setFont(theme.font(theme.SMALL_POINT_SIZE))
            txt.setBrush(color)
            txt.setPos(cx - txt.boundingRect().width() / 2, mid.y() + 2 * r2 + 2)
            group.addToGroup(txt)

    def _ground(self, group, x, y, side, color):
        w, h = 10.0, 40.0
        rect = QtCore.QRectF(x if side > 0 else x - w, y - h / 2, w, h)
        block = QtWidgets.QGraphicsRectItem(rect)
        block.setPen(QtGui.QPen(color, 1.2))
        block.setBrush(QtGui.QBrush(color, QtCore.Qt.BDiagPattern))
        group.addToGroup(block)
        face = QtWidgets.QGraphicsLineItem(x, y - h / 2 - 4, x, y + h / 2 + 4)
        face.setPen(QtGui.QPen(color, 2.2))
        group.addToGroup(face)

    # ---------------------------------------------------------------- selection / mode colour
    def select(self, selection) -> None:
        self._selection = selection
        self._apply_selection()
        item = self._items.get(selection) if selection else None
        if item is not None:
            self.ensureVisible(item, 40, 40)

    def _apply_selection(self, redrawn=()):
        """Mark the selected element; only the previous and the new selection
        (and elements just redrawn) are touched."""
        keys = {self._shown_selection, self._selection} | set(redrawn)
        for key in keys:
            item = self._items.get(key) if key else None
            if item is None:
                continue
            selected = key == self._selection
            if key[0] == "disc":
                item.setPen(QtGui.QPen(theme.qcolor(theme.ACCENT), 3.2) if selected else self._disc_pen[key])
            else:
                for halo in self._halos.pop(key, []):
                    self.scene().removeItem(halo)
                if selected:
                    self._halos[key] = self._halo(key, item)
        self._shown_selection = self._selection if self._selection in self._items else None

    def _halo(self, key, group) -> list:
        """A selected link glows: a wide, pale accent stroke behind each of its lines.
        (Plain items rather than a QGraphicsEffect: an item that carried an effect
        crashes PySide when it is deleted on a redraw, and blurring costs a pixmap
        pass per paint.)"""
        glow = theme.qcolor(theme.ACCENT, 90)
        out = []
        for child in group.childItems():
            if isinstance(child, QtWidgets.QGraphicsPathItem):
                shape = QtGui.QPainterPath(child.path())
            elif isinstance(child, QtWidgets.QGraphicsLineItem):
                shape = QtGui.QPainterPath(child.line().p1())
                shape.lineTo(child.line().p2())
            elif isinstance(child, (QtWidgets.QGraphicsRectItem, QtWidgets.QGraphicsEllipseItem)):
                shape = QtGui.QPainterPath()
                (shape.addRect if isinstance(child, QtWidgets.QGraphicsRectItem) else shape.addEllipse)(
                    child.rect())
            else:
                continue
            halo = QtWidgets.QGraphicsPathItem(child.sceneTransform().map(shape))
            pen = QtGui.QPen(glow, child.pen().widthF() + 8.0)
            pen.setCapStyle(QtCore.Qt.RoundCap)
            pen.setJoinStyle(QtCore.Qt.RoundJoin)
            halo.setPen(pen)
            halo.setZValue(0.5)  # under the links (1) and discs (2)
            halo.setData(0, key)
            self.scene().addItem(halo)
            out.append(halo)
        return out

    def set_mode_shape(self, amplitudes: dict | None) -> None:
        """Colour each disc by its twist amplitude in the selected mode
        (blue positive, vermilion negative, white at a node); None: plain."""
        if amplitudes == self._shape:
            return  # the same colours (the view refresh and the new results both ask)
        self._shape = amplitudes
        self._apply_shape()

    def _apply_shape(self, redrawn=None):
        """Fill each disc with its mode colour; a brush is set only where the colour changes.
        ``redrawn``: only these element keys were drawn anew (the others keep their fill)."""
        pos, neg = (theme.qcolor(theme.SERIES[k]).getRgb()[:3] for k in (0, 1))
        shape = self._shape
        shown = self._shown_fill
        items = self._items.items() if redrawn is None else \
            [(k, self._items[k]) for k in redrawn if k in self._items]
        for key, item in items:
            if key[0] != "disc":
                continue
            if not shape or key[1] not in shape:
                if shown.get(key, 0) is not None:
                    item.setBrush(self._disc_brush[key])
                    shown[key] = None
                continue
            a = float(shape[key[1]])
            a = 0.0 if not math.isfinite(a) else max(-1.0, min(1.0, a))
            c = pos if a >= 0 else neg
            t = abs(a)
            rgb = (int(255 + t * (c[0] - 255)), int(255 + t * (c[1] - 255)), int(255 + t * (c[2] - 255)))
            if shown.get(key) != rgb:
                item.setBrush(QtGui.QColor(*rgb))
                shown[key] = rgb

    # ---------------------------------------------------------------- view
    def fit(self) -> None:
        rect = self.scene().sceneRect()
        if rect.isEmpty():
            return
        self.resetTransform()
        self.fitInView(rect, QtCore.Qt.KeepAspectRatio)
        if self.transform().m11() > 1.3:  # a short train: do not blow it up
            self.resetTransform()
            self.scale(1.3, 1.3)
        self.centerOn(rect.center())
        self._relabel()

    def zoom(self, factor: float) -> None:
        self.scale(factor, factor)
        self._relabel()

    def resizeEvent(self, event):
        super().resizeEvent(event)
        if self._signature is not None and not getattr(self, "_user_zoomed", False):
            self.fit()

    def wheelEvent(self, event):
        steps = event.angleDelta().y() / 120.0
        if steps:
            self._user_zoomed = True
            self.zoom(1.15 ** steps)

    def item_key_at(self, view_pos) -> tuple | None:
        for item in self.items(view_pos):
            key = item.data(0)
            if key is None and item.group() is not None:
                key = item.group().data(0)
            if key:
                return tuple(key)
        return None

    def mousePressEvent(self, event):
        self._press_pos = event.position().toPoint()
        super().mousePressEvent(event)

    def mouseReleaseEvent(self, event):
        super().mouseReleaseEvent(event)
        p = event.position().toPoint()
        if event.button() == QtCore.Qt.LeftButton and self._press_pos is not None and \
                (p - self._press_pos).manhattanLength() < 5:
            key = self.item_key_at(p)
            self.select(key)
            self.selectionMade.emit(key)

    def contextMenuEvent(self, event):
        key = self.item_key_at(event.pos())
        if key:
            self.select(key)
            self.selectionMade.emit(key)
        menu = QtWidgets.QMenu(self)
        for act in self.context_actions:
            if act is None:
                menu.addSeparator()
            else:
                menu.addAction(act)
        menu.exec(event.globalPos())
