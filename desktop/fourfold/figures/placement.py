"""Where a figure's texts go: each in the first of its candidate places that stays inside the
plot area and clear of the texts and markers placed before it; a text with no such place is
left out rather than drawn over another.

Used by the trade-off figures (:meth:`fourfold.figures.tradeoff_plot.FigurePlot.place_labels`)
and the boundaries figure (:func:`fourfold.figures.boundaries.paint_boundaries`).
"""

from __future__ import annotations

from collections.abc import Iterable

from PySide6.QtCore import QPointF, QRectF


def clear_of(box: QRectF, area: QRectF, taken: Iterable[QRectF]) -> bool:
    """Whether ``box`` lies inside ``area`` and overlaps none of ``taken``.

    Examples
    --------
    >>> area = QRectF(0, 0, 100, 50)
    >>> clear_of(QRectF(10, 10, 20, 10), area, [QRectF(40, 10, 20, 10)])
    True
    >>> clear_of(QRectF(90, 10, 20, 10), area, []), clear_of(QRectF(35, 15, 20, 10), area,
    ...                                                         [QRectF(40, 10, 20, 10)])
    (False, False)
    """
    return area.contains(box) and not any(box.intersects(other) for other in taken)


def first_clear(boxes: Iterable[QRectF], area: QRectF,
                taken: Iterable[QRectF]) -> int | None:
    """The position of the first of ``boxes`` clear of ``taken`` inside ``area`` (or None).

    Examples
    --------
    >>> first_clear([QRectF(0, 0, 10, 10), QRectF(20, 0, 10, 10)], QRectF(0, 0, 40, 40),
    ...             [QRectF(5, 5, 2, 2)])
    1
    """
    taken = list(taken)
    for position, box in enumerate(boxes):
        if clear_of(box, area, taken):
            return position
    return None


def place_line_label(label, positions: Iterable[float],
                     anchors: Iterable[tuple[float, float]], area: QRectF,
                     taken: Iterable[QRectF]) -> QRectF | None:
    """Move a pyqtgraph line label along its line (``positions``, fractions of the view) and
    to either side of it (``anchors``) until it is clear; hide it when it never is.

    Returns its box in scene coordinates, or None when hidden.
    """
    taken = list(taken)
    anchors = list(anchors)
    for position in positions:
        for anchor in anchors:
            label.anchors = [anchor, anchor]
            label.setPosition(position)
            box = text_box(label)
            if clear_of(box, area, taken):
                label.setVisible(True)
                return box
    label.setVisible(False)
    return None


def text_box(item) -> QRectF:
    """Where a pyqtgraph text item's text is, in scene coordinates.

    Not ``sceneBoundingRect()``: the item undoes the view's scale only when it is next painted,
    so before that its scene rectangle is the text scaled by the view's range.
    """
    origin = item.mapToScene(QPointF(0.0, 0.0))
    size = item.textItem.boundingRect().size()
    anchor = item.anchor
    return QRectF(origin.x() - anchor.x() * size.width(), origin.y() - anchor.y() * size.height(),
                  size.width(), size.height())
