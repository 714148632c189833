"""The main window's actions, with their shortcuts, and its menus.

File (new, open, recent, save, export, quit), Edit (undo/redo mirrored from the plan's command
stack, copy, paste), Plan (row actions, the history import, the traffic model, the simulation
checks), View (text
size) and Help (about). Every action has a keyboard shortcut; the table's context menu holds
the row actions. An action kept as ``self.<name>_action`` gets that attribute's name as its
object name (:meth:`WindowActions.name_actions`), by which the tests find it.
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtGui import QAction, QKeySequence


class WindowActions:
    """Builds the actions and menus of :class:`fourfold.ui.main_window.MainWindow`."""

    def _action(self, text: str, slot, shortcut=None, tip: str = "", *,
                keep_edit: bool = True) -> QAction:
        """An action of the window that runs ``slot()``.

        An open cell editor is closed first: its text is put into the plan (``keep_edit``;
        when the plan refuses it the editor stays open and the action does not run) or
        dropped, as Escape would (Undo and Redo act on what was in the plan). With
        ``keep_edit`` a settings field still being typed in is committed first too (a number
        typed into Looks, then Ctrl+S, saves that number); before Undo and Redo its text is
        dropped, as the cell editor's is.
        """
        action = QAction(text, self)
        if shortcut is not None:
            keys = shortcut if isinstance(shortcut, list) else [shortcut]
            sequences = {}
            for key in keys:
                sequence = QKeySequence(key)
                if not sequence.isEmpty():
                    sequences.setdefault(sequence.toString(), sequence)
            action.setShortcuts(list(sequences.values()))
        action.setStatusTip(tip)
        # triggered(bool) would hand its "checked" flag to a slot's first optional parameter
        # (Edit → Paste once pasted ``False``): the slot is called without arguments
        action.triggered.connect(lambda _checked=False: self._before_action(keep_edit) and slot())
        self.addAction(action)
        return action

    def _before_action(self, keep_edit: bool) -> bool:
        """Close an open cell editor and commit (``keep_edit``) or drop what a settings field
        still holds typed; False when the action must wait (a refused cell)."""
        if not self.table.finish_editing(commit=keep_edit):
            return False
        if keep_edit:
            self.settings_panel.commit_pending()
        else:
            self.settings_panel.drop_pending()
        return True

    def name_actions(self) -> None:
        """Name every action kept as an attribute after that attribute (``paste_action``)."""
        for name, value in vars(self).items():
            if isinstance(value, QAction) and not value.objectName():
                value.setObjectName(name)

    def _build_actions(self) -> None:
        key = QKeySequence.StandardKey
        self.new_action = self._action("&New plan", self.new_plan, key.New, "Start an empty plan")
        self.open_action = self._action("&Open…", self.open_file, key.Open, "Open a plan file")
        self.save_action = self._action("&Save", self.save_file, key.Save, "Save the plan")
        self.save_as_action = self._action("Save &as…", self.save_file_as, key.SaveAs,
                                           "Save the plan under a new name")
        self.csv_action = self._action("&CSV table…", self.export_csv, "Ctrl+E",
                                       "Write the plan table as CSV")
        self.pdf_action = self._action("&PDF report…", self.export_pdf, "Ctrl+Shift+E",
                                       "Write the plan as a PDF report")
        self.quit_action = self._action("&Quit", self.close, [key.Quit, "Ctrl+Q"],
                                        "Close Fourfold")
        self.undo_action = self._action("&Undo", self.document.undo, key.Undo,
                                        keep_edit=False)
        self.redo_action = self._action("&Redo", self.document.redo,
                                        [key.Redo, "Ctrl+Shift+Z", "Ctrl+Y"], keep_edit=False)
        self.copy_action = self._action("&Copy cells", self.table.copy_selection, key.Copy,
                                        "Copy the selected cells as tab-separated text")
        self.paste_action = self._action("&Paste cells", self.table.paste, key.Paste,
                                         "Paste tab-separated text at the current cell")
        for action in (self.copy_action, self.paste_action):
            action.setShortcutContext(Qt.ShortcutContext.WidgetShortcut)
            self.table.addAction(action)
        self.add_action = self._action("&Add metric", self.add_metric, "Ctrl+Shift+N",
                                       "Add a metric row below the current one")
        self.duplicate_action = self._action("&Duplicate metric", self.duplicate_metrics,
                                             "Ctrl+D", "Copy the selected rows below them")
        self.delete_action = self._action("De&lete metric", self.delete_metrics,
                                          "Ctrl+Del", "Remove the selected rows")
        self.up_action = self._action("Move &up", lambda: self.move_metric(-1), "Alt+Up",
                                      "Move the current row up")
        self.down_action = self._action("Move do&wn", lambda: self.move_metric(1), "Alt+Down",
                                        "Move the current row down")
        self.sort_action = self._action(
            "S&ort rows by this column", lambda: self.table.sort_column(), "Ctrl+Shift+O",
            "Sort the rows by the current cell's column (again: descending); one undo step")
        self.bigger_action = self._action("&Larger text", lambda: self.step_text(1),
                                          [key.ZoomIn, "Ctrl+="])
        self.smaller_action = self._action("&Smaller text", lambda: self.step_text(-1),
                                           key.ZoomOut)
        self.reset_text_action = self._action("&Normal text size", lambda: self.set_text_scale(1),
                                              "Ctrl+0")
        self.about_action = self._action("&About Fourfold", self.about, key.HelpContents)

    def _build_menus(self) -> None:
        bar = self.menuBar()
        self.file_menu = bar.addMenu("&File")
        self.file_menu.addActions([self.new_action, self.open_action])
        self.recent_menu = self.file_menu.addMenu("Open &recent")
        self.recent_menu.aboutToShow.connect(self._fill_recent)
        self.file_menu.addSeparator()
        self.file_menu.addActions([self.save_action, self.save_as_action])
        self.export_menu = self.file_menu.addMenu("&Export")
        self.export_menu.addActions([self.csv_action, self.pdf_action])
        self.file_menu.addSeparator()
        self.file_menu.addAction(self.quit_action)
        self.edit_menu = bar.addMenu("&Edit")
        self.edit_menu.addActions([self.undo_action, self.redo_action])
        self.edit_menu.addSeparator()
        self.edit_menu.addActions([self.copy_action, self.paste_action])
        self.plan_menu = bar.addMenu("&Plan")
        self.plan_menu.addActions([self.add_action, self.duplicate_action, self.delete_action])
        self.plan_menu.addSeparator()
        self.plan_menu.addActions([self.up_action, self.down_action, self.sort_action])
        self.table.setContextMenuPolicy(Qt.ContextMenuPolicy.ActionsContextMenu)
        separator = QAction(self.table)
        separator.setSeparator(True)
        self.table.addActions([separator, self.add_action, self.duplicate_action,
                               self.delete_action, self.up_action, self.down_action])
        self.plan_menu.addSeparator()
        self.history_action = self._action(
            "Import &history…", self.import_history, "Ctrl+Shift+H",
            "Fill baselines, sds and ρ from a per-unit history file (one undo step)")
        self.plan_menu.addAction(self.history_action)
        self.traffic_action = self._action(
            "&Traffic model…", self.edit_traffic, "Ctrl+Shift+T",
            "Constant daily units or a reach curve, a ramp-up and a burn-in (one undo step)")
        self.plan_menu.addAction(self.traffic_action)
        self.simulate_action = self._action(
            "Check by &simulation…", self.check_by_simulation, "Ctrl+Shift+K",
            "Simulate the selected rows' tests and compare with the closed-form power")
        self.simulate_plan_action = self._action(
            "Check whole plan by si&mulation…", self.check_plan_by_simulation, "Ctrl+Alt+K",
            "Simulate every row's test and compare with the closed-form power")
        self.plan_menu.addActions([self.simulate_action, self.simulate_plan_action])
        self.table.addAction(self.simulate_action)
        self.view_menu = bar.addMenu("&View")
        self.view_menu.addActions([self.bigger_action, self.smaller_action,
                                   self.reset_text_action])
        self.help_menu = bar.addMenu("&Help")
        self.help_menu.addAction(self.about_action)
