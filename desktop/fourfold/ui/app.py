"""Start the window (``fourfold [PLAN]``) or render it offscreen to a PNG (``fourfold shot``)."""

from __future__ import annotations

import os
import pathlib
import sys
import tempfile

from PySide6.QtCore import QBuffer, QByteArray, QCoreApplication, QIODevice, QSettings
from PySide6.QtWidgets import QApplication

from fourfold import atomic
from fourfold.errors import FourfoldError
from fourfold.plan import effective, load, sample_path
from fourfold.ui import theme

APP_NAME = "Fourfold"
ORGANISATION = "Fourfold"


def application() -> QApplication:
    """The one QApplication, created with Fourfold's names, style and palette."""
    QCoreApplication.setApplicationName(APP_NAME)
    QCoreApplication.setOrganizationName(ORGANISATION)
    app = QApplication.instance()
    if app is None:
        app = QApplication(sys.argv[:1])
        app.setApplicationDisplayName(APP_NAME)
    theme.apply(app)
    app.setWindowIcon(theme.app_icon())
    return app


def _load(plan_path: str | None):
    path = pathlib.Path(plan_path) if plan_path is not None else None
    plan = load(path if path is not None else sample_path())
    return plan, path


def _close(window, app: QApplication) -> None:
    """Close the window and let Qt delete it before the interpreter exits."""
    window.document.stack.mark_clean()
    window.close()
    window.deleteLater()
    app.processEvents()


def run_window(plan_path: str | None) -> int:
    """Open the window on ``plan_path`` (the bundled sample plan when None) until it closes.

    Raises
    ------
    FourfoldError
        When the file cannot be read as a plan (the command line prints it).
    """
    plan, path = _load(plan_path)
    app = application()
    from fourfold.ui.main_window import MainWindow

    window = MainWindow(plan, path, QSettings())
    window.resize(1400, 900)
    window.show()
    window.offer_recovery()
    code = app.exec()
    window.deleteLater()
    app.processEvents()
    return code


def run_shot(plan_path: str | None, output: str, size: tuple[int, int] = (1400, 900),
             row: int | None = None, scenario: str | None = None,
             tab: str = "plots") -> int:
    """Render the window on ``plan_path`` offscreen to the PNG ``output``; returns 0.

    Parameters
    ----------
    plan_path : str or None
        The plan (the bundled sample when None).
    output : str
        PNG file to write.
    size : (int, int)
        Window width and height in pixels.
    row : int, optional
        Metric row to select, counted from 1.
    scenario : str, optional
        The scenario to show (default: the one the plan was saved with).
    tab : {"plots", "scenarios"}
        The tab under the table: the trade-off plots, or the scenarios' comparison and what
        moves the duration.

    Raises
    ------
    FourfoldError
        When the plan cannot be read, ``row`` is out of range, the plan has no such scenario
        or the PNG cannot be written (then an existing file at ``output`` is left as it was).
    """
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    plan, path = _load(plan_path)
    atomic.target_path(output)  # refuse a device or a missing folder before rendering
    if scenario is not None:
        from fourfold.plan.scenarios import BASE, find

        plan.active = None if scenario.casefold() == BASE.casefold() else \
            find(plan, scenario).name
    rows = len(effective(plan, plan.active).metrics)
    if row is not None and not 1 <= row <= rows:
        raise FourfoldError(f"--row must be from 1 to {rows}; got {row}")
    app = application()
    from fourfold.ui.main_window import MainWindow

    with tempfile.TemporaryDirectory(prefix="fourfold-shot-") as scratch:
        settings = QSettings(os.path.join(scratch, "shot.ini"), QSettings.Format.IniFormat)
        window = MainWindow(plan, path, settings, data_dir=scratch)
        window.autosave_timer.stop()
        window.setMinimumSize(200, 200)  # honour small sizes; the layout squeezes
        window.resize(*size)
        if row is not None:
            window.table.setCurrentIndex(window.model.index(row - 1, 0))
            window.table.selectRow(row - 1)
        window.lower_tabs.setCurrentIndex(1 if tab == "scenarios" else 0)
        window.show()
        app.processEvents()
        window.plots.finish()  # the plots are drawn after the first paint: draw them now
        app.processEvents()
        image = window.grab().toImage()
        _close(window, app)
    encoded = QByteArray()
    buffer = QBuffer(encoded)
    buffer.open(QIODevice.OpenModeFlag.WriteOnly)
    if not image.save(buffer, "PNG"):
        raise atomic.WriteError(f"cannot write {output}: the window could not be encoded as PNG")
    buffer.close()
    data = encoded.data()
    if png_problem(data):
        raise atomic.WriteError(f"cannot write {output}: {png_problem(data)}")
    atomic.write_bytes(output, data)
    return 0


_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
_PNG_END = b"IEND\xaeB`\x82"


def png_problem(data: bytes) -> str | None:
    """What is wrong with encoded PNG bytes (no PNG signature at the start, or no end chunk
    at the end), or None.

    Examples
    --------
    >>> png_problem(_PNG_SIGNATURE + b"IHDR")
    'the PNG came out incomplete'
    """
    if not (data.startswith(_PNG_SIGNATURE) and data.endswith(_PNG_END)):
        return "the PNG came out incomplete"
    return None
