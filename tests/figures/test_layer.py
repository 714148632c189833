"""The figure layer: series in data and view coordinates, markers in device pixels.

Facts checked here are geometry (common practice, no source): a marker of diameter d drawn
under any painter scale covers about d device pixels.
"""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import QPointF
from PySide6.QtGui import QBrush, QColor, QImage, QPainter, QPen

from fourfold.figures.layer import SeriesLayer, Swatch

pytestmark = pytest.mark.qt


def test_series_keep_data_and_view_coordinates(qapp):
    layer = SeriesLayer()
    layer.set_series("curve", [1.0, 10.0, 100.0], [5.0, np.nan, 7.0],
                     [0.0, 1.0, 2.0], [5.0, np.nan, 7.0])
    layer.set_series("point", [10.0, np.nan], [3.0, 4.0], [1.0, np.nan], [3.0, 4.0])
    x, y = layer.points("curve")
    assert list(x) == [1.0, 10.0, 100.0] and np.isnan(y[1])  # lines keep their gaps
    assert layer.view_points("curve")[0].tolist() == [0.0, 1.0, 2.0]
    assert layer.points("point")[0].tolist() == [10.0]  # markers skip non-finite points
    layer.clear()
    assert all(layer.points(name)[0].size == 0 for name in ("curve", "neighbour", "marks",
                                                              "point"))
    with pytest.raises(ValueError, match="name"):
        layer.set_series("band", [1.0], [1.0], [1.0], [1.0])
    with pytest.raises(ValueError, match="name"):
        layer.set_line_style("point", QPen())


@pytest.mark.parametrize("scale", [1.0, 12.5])
def test_a_swatch_marker_is_sized_in_device_pixels(qapp, scale):
    # On a PDF page the legend is painted under the page's scale (12.5 at 1200 dpi); the
    # marker must keep the diameter the layer gives it there, not be scaled once more.
    layer = SeriesLayer()
    layer.set_dot_style("point", 13.0, QPen(QColor("black")), QBrush(QColor("black")))
    image = QImage(400, 400, QImage.Format.Format_ARGB32)
    image.fill(QColor("white"))
    painter = QPainter(image)
    painter.scale(scale, scale)
    Swatch(layer, "point").paint(painter)
    painter.end()
    pixels = np.frombuffer(image.constBits(), dtype=np.uint8).reshape(400, 400, 4)
    rows, columns = np.nonzero(pixels[..., 0] < 128)
    assert 11 <= columns.max() - columns.min() + 1 <= 15
    assert 11 <= rows.max() - rows.min() + 1 <= 15
    centre = QPointF(10.0 * scale, 11.0 * scale)
    assert abs(columns.mean() - centre.x()) < 1.5 and abs(rows.mean() - centre.y()) < 1.5


def test_labels_follow_their_markers_and_can_be_thinned(qapp):
    layer = SeriesLayer()
    layer.set_series("marks", [7.0, 14.0, 21.0], [3.0, 2.0, 1.5], [7.0, 14.0, 21.0],
                     [3.0, 2.0, 1.5])
    layer.set_labels("marks", ["3", "2", "1.5"], [True, False, True])
    assert layer.labels("marks") == ["3", "1.5"]
    assert layer.label_width("marks") > 0
    with pytest.raises(ValueError, match="one flag per label"):
        layer.set_labels("marks", ["3"], [True, False])
    layer.clear()
    assert layer.labels("marks") == [] and layer.label_width("marks") == 0.0
