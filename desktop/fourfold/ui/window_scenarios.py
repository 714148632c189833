"""The main window's scenarios: their actions and menu, the tab that compares them, the title.

Every scenario action runs one undoable command of
:mod:`fourfold.plan.scenario_commands` through the document; a refused one (a name taken,
say) is reported in the status line and changes nothing. The scenario on show is named in the
window title, the summary line and the comparison's marked column; edits then change only it.
"""

from __future__ import annotations

from PySide6.QtWidgets import QInputDialog, QLineEdit

from fourfold.plan import scenarios
from fourfold.plan.scenario_commands import (
    ApplyToBase,
    DeleteScenario,
    DuplicateScenario,
    ForgetStale,
    NewScenario,
    RenameScenario,
    RestoreRows,
    SwitchScenario,
)


class WindowScenarios:
    """Scenario actions of :class:`fourfold.ui.main_window.MainWindow`."""

    def _build_scenario_actions(self) -> None:
        self.new_scenario_action = self._action(
            "&New scenario…", self.new_scenario, "Ctrl+Alt+N",
            "A new scenario from the plan on show; edits then change only it")
        self.duplicate_scenario_action = self._action(
            "D&uplicate scenario", self.duplicate_scenario, "Ctrl+Alt+D",
            "Copy the scenario on show and show the copy")
        self.rename_scenario_action = self._action(
            "&Rename scenario…", self.rename_scenario, "Ctrl+Alt+R",
            "Rename the scenario on show")
        self.delete_scenario_action = self._action(
            "&Delete scenario", self.delete_scenario, "Ctrl+Alt+Del",
            "Delete the scenario on show and show the base (Undo brings it back)")
        self.apply_scenario_action = self._action(
            "&Apply scenario to base", self.apply_scenario, "Ctrl+Alt+A",
            "Make the scenario on show the base; the other scenarios keep their numbers")
        self.show_base_action = self._action(
            "Show &base", lambda: self.switch_scenario(None), "Ctrl+Alt+0",
            "Show and edit the plan as entered")
        self.next_scenario_action = self._action(
            "Ne&xt scenario", lambda: self.step_scenario(1), "Ctrl+Alt+PgDown",
            "Show the next scenario")
        self.previous_scenario_action = self._action(
            "Pre&vious scenario", lambda: self.step_scenario(-1), "Ctrl+Alt+PgUp",
            "Show the previous scenario")
        self.restore_rows_action = self._action(
            "Bring back &left-out rows", self.restore_rows, "Ctrl+Alt+I",
            "Show again the rows the scenario leaves out")
        self.forget_stale_action = self._action(
            "&Forget stale changes", self.forget_stale, "Ctrl+Alt+F",
            "Drop the scenario's changes of rows or fields that no longer exist")
        self.overlay_action = self._action(
            "&Other scenarios' curves", self._toggle_overlay, "Ctrl+Alt+O",
            "Draw the selected row's curves of the other scenarios faintly in the plots")
        self.overlay_action.setCheckable(True)
        self.overlay_action.setChecked(True)
        self.plots_tab_action = self._action(
            "&Trade-off plots", lambda: self.lower_tabs.setCurrentIndex(0), "Ctrl+1",
            "Show the trade-off plots of the selected row")
        self.scenarios_tab_action = self._action(
            "Scenarios and &what moves the duration", lambda: self.lower_tabs.setCurrentIndex(1),
            "Ctrl+2", "Compare the scenarios and see which assumptions move the duration")

    def scenario_tool_actions(self) -> list:
        """The actions the scenarios tab's tool bar shows."""
        return [self.new_scenario_action, self.duplicate_scenario_action,
                self.rename_scenario_action, self.delete_scenario_action,
                self.apply_scenario_action]

    def _build_scenario_menu(self) -> None:
        self.scenario_menu = self.menuBar().insertMenu(
            self.view_menu.menuAction(), self._scenario_menu()).menu()

    def _scenario_menu(self):
        from PySide6.QtWidgets import QMenu

        menu = QMenu("&Scenario", self)
        menu.addActions(self.scenario_tool_actions())
        menu.addSeparator()
        menu.addActions([self.show_base_action, self.next_scenario_action,
                         self.previous_scenario_action])
        menu.addSeparator()
        menu.addActions([self.restore_rows_action, self.forget_stale_action])
        self.view_menu.addSeparator()
        self.view_menu.addActions([self.plots_tab_action, self.scenarios_tab_action,
                                   self.overlay_action])
        return menu

    # -- asking ----------------------------------------------------------------------------

    def ask_text(self, title: str, label: str, default: str) -> str | None:
        """Ask for a line of text (a scenario's name); ``None`` when cancelled.

        Tests replace it with a recorder.
        """
        text, ok = QInputDialog.getText(self, title, label, QLineEdit.EchoMode.Normal, default)
        return text if ok else None

    # -- the actions -----------------------------------------------------------------------

    def new_scenario(self) -> None:
        """Scenario → New scenario: ask for a name, copy what is on show, show the copy."""
        whole = self.document.whole
        name = self.ask_text("New scenario", "Name of the new scenario:",
                             scenarios.free_name(whole, f"Scenario {len(whole.scenarios) + 1}"))
        if name is not None and self.document.apply(NewScenario(name)):
            self.show_message(f"Showing scenario {self.document.scenario}: edits now change "
                              "only it")

    def _active_or_tell(self) -> str | None:
        name = self.document.scenario
        if name is None:
            self.show_message("The base is on show: choose a scenario first")
        return name

    def duplicate_scenario(self) -> None:
        """Scenario → Duplicate scenario: a copy of the one on show, shown."""
        name = self._active_or_tell()
        if name is not None:
            self.document.apply(DuplicateScenario(name))

    def rename_scenario(self) -> None:
        """Scenario → Rename scenario."""
        name = self._active_or_tell()
        if name is None:
            return
        new_name = self.ask_text("Rename scenario", f"New name for {name}:", name)
        if new_name is not None:
            self.document.apply(RenameScenario(name, new_name))

    def delete_scenario(self) -> None:
        """Scenario → Delete scenario (the base is shown; Undo brings it back)."""
        name = self._active_or_tell()
        if name is not None and self.document.apply(DeleteScenario(name)):
            self.show_message(f"Deleted scenario {name}; Undo brings it back")

    def apply_scenario(self) -> None:
        """Scenario → Apply scenario to base."""
        name = self._active_or_tell()
        if name is not None and self.document.apply(ApplyToBase(name)):
            self.show_message(f"{name} is now the base; the other scenarios keep their numbers")

    def restore_rows(self) -> None:
        """Scenario → Bring back left-out rows of the scenario on show."""
        name = self._active_or_tell()
        if name is not None:
            self.document.apply(RestoreRows(name))

    def forget_stale(self) -> None:
        """Scenario → Forget stale changes of the scenario on show."""
        name = self._active_or_tell()
        if name is not None:
            self.document.apply(ForgetStale(name))

    def switch_scenario(self, name: str | None) -> None:
        """Show and edit scenario ``name`` (``None``: the base)."""
        if name != self.document.scenario:
            self.document.apply(SwitchScenario(name))

    def step_scenario(self, step: int) -> None:
        """Show the next (+1) or previous (−1) scenario, the base counted first."""
        names = [None, *(scenario.name for scenario in self.document.whole.scenarios)]
        if len(names) > 1:
            index = names.index(self.document.scenario)
            self.switch_scenario(names[(index + step) % len(names)])

    def _toggle_overlay(self) -> None:
        self._show_row()

    # -- what shows the scenario -----------------------------------------------------------

    def show_title(self) -> None:
        """The window title: the file and the scenario on show."""
        scenario = self.document.scenario
        shown = f" — scenario {scenario}" if scenario is not None else ""
        self.setWindowTitle(f"{self.document.display_name}[*]{shown} — Fourfold")

    def _scenario_state(self) -> None:
        """Enable the scenario actions that apply, and name the scenario in the title."""
        whole = self.document.whole
        active = whole.active is not None
        for action in (self.duplicate_scenario_action, self.rename_scenario_action,
                       self.delete_scenario_action, self.apply_scenario_action):
            action.setEnabled(active)
        self.show_base_action.setEnabled(active)
        for action in (self.next_scenario_action, self.previous_scenario_action):
            action.setEnabled(bool(whole.scenarios))
        self.forget_stale_action.setEnabled(active and bool(scenarios.problems(
            whole, whole.active)))
        self.restore_rows_action.setEnabled(
            active and bool(scenarios.find(whole, whole.active).omitted))
        self.show_title()
