"""The Models step (the fit wizard): for the chosen meter, a walk through five pages — the
readings it learns from, the families it compares, the backtest as it runs, the ranking in
words, and the choice with what the chosen model says — with Back and Next.

A meter that already has a chosen model shows it on opening, read from the project file
without refitting; "Fit and compare" runs the wizard again and keeps its choice.
"""

from __future__ import annotations

from collections.abc import Callable
from functools import partial
from html import escape

from PySide6.QtCore import Signal
from PySide6.QtWidgets import (
    QHBoxLayout,
    QLabel,
    QPushButton,
    QStackedWidget,
    QVBoxLayout,
    QWidget,
)

from desktop.fit_pages import (
    PAGES,
    BacktestPage,
    ChoicePage,
    FamiliesPage,
    RankingPage,
    ReadingsPage,
)
from desktop.meter_screen import MeterScreen
from desktop.model_jobs import (
    FitRequest,
    MeterView,
    ModelReport,
    fit_report,
    meter_view,
    ticked_families,
)
from desktop.project_changes import MODEL, use_model_remembered
from desktop.session import Session
from desktop.task_runner import Job
from desktop.workers import Failure, Work

READINGS, FAMILIES, BACKTEST, RANKING, CHOICE = range(len(PAGES))


class ModelsScreen(MeterScreen):
    """Pick a meter; walk from its readings to a chosen model, page by page."""

    NO_PROJECT = "Open a project to fit models to its meters."
    #: The person accepted the model in use of this meter and wants to go on to the budget.
    accepted = Signal(str)
    #: A model of this meter was kept in the project (fitted, or another one chosen).
    model_kept = Signal(str)
    FOLLOWS = (MODEL,)

    def __init__(self, session: Session, parent: QWidget | None = None) -> None:
        super().__init__(session, parent)
        self.report: ModelReport | None = None
        self._backtest: Job | None = None  # the last fit asked for
        self.readings_page = ReadingsPage()
        self.families_page = FamiliesPage()
        self.backtest_page = BacktestPage()
        self.ranking_page = RankingPage()
        self.choice_page = ChoicePage()
        # The widgets a person (and a test) works with, by their plain names.
        self.families = self.families_page.families
        self.origins = self.families_page.origins
        self.fit_button = self.families_page.fit_button
        self.backtest = self.backtest_page.plot
        self.why = self.ranking_page.why
        self.residuals = self.ranking_page.residuals
        self.ranking = self.choice_page.ranking
        self.coefficients = self.choice_page.coefficients
        self.use_button = self.choice_page.use_button
        self.fit_button.clicked.connect(self.fit)
        self.use_button.clicked.connect(self.use_selected)
        self.choice_page.accept_button.clicked.connect(self.accept)
        self.ranking.table.itemSelectionChanged.connect(self._selection_changed)
        self.pages = QStackedWidget()
        for page in (
            self.readings_page,
            self.families_page,
            self.backtest_page,
            self.ranking_page,
            self.choice_page,
        ):
            self.pages.addWidget(page)
        self.kept = QLabel()
        self.kept.setStyleSheet("color: #5a5f66;")
        self.path = QLabel()
        self.path.setToolTip("Where you are in the walk-through; Back and Next move along it.")
        self.title = QLabel()
        self.back_button = QPushButton("‹ Back")
        self.back_button.clicked.connect(lambda: self.go_to(self.page() - 1))
        self.next_button = QPushButton("Next ›")
        self.next_button.clicked.connect(lambda: self.go_to(self.page() + 1))
        self.runner.started.connect(self._work_started)
        self.runner.ended.connect(self._work_ended)
        self._lay_out()
        self.follow_session()
        self.go_to(READINGS)

    def _lay_out(self) -> None:
        top = QHBoxLayout()
        top.addWidget(QLabel("Meter"))
        top.addWidget(self.meter)
        top.addSpacing(12)
        top.addWidget(self.path, 1)
        top.addWidget(self.kept)
        heading = QHBoxLayout()
        heading.addWidget(self.title, 1)
        heading.addWidget(self.back_button)
        heading.addWidget(self.next_button)
        layout = QVBoxLayout(self)
        layout.addLayout(top)
        layout.addLayout(heading)
        layout.addWidget(self.notice)
        layout.addWidget(self.task_bar)
        layout.addWidget(self.pages, 1)

    # -- moving through the pages -------------------------------------------------------------

    def page(self) -> int:
        """The page on show (0 to 4)."""
        return self.pages.currentIndex()

    def reachable(self) -> int:
        """The last page there is something to show on."""
        if self.session.project is None or not self.meter.currentText():
            return READINGS
        if self.report is None:
            return BACKTEST if self._fitting() else FAMILIES
        return CHOICE if self.report.chosen is not None else RANKING

    def go_to(self, page: int) -> None:
        """Show ``page`` (kept within the pages there is something to show on)."""
        page = max(READINGS, min(page, self.reachable()))
        if page != self.page() and self.notice.tone == "done":
            self.notice.clear()  # it said what the last page did
        self.pages.setCurrentIndex(page)
        self._show_where()

    def _show_where(self) -> None:
        page = self.page()
        steps = [
            f"<b>{number} {short}</b>" if number - 1 == page else f"{number} {short}"
            for number, (short, _) in enumerate(PAGES, start=1)
        ]
        self.path.setText(" › ".join(steps))
        self.title.setText(f"<b>{page + 1} of {len(PAGES)} · {escape(PAGES[page][1])}</b>")
        self.back_button.setEnabled(page > READINGS)
        self.next_button.setEnabled(page < self.reachable())
        self.next_button.setToolTip(
            "Press 'Fit and compare' to run the backtest first."
            if page == FAMILIES and self.report is None
            else ""
        )

    # -- choices ------------------------------------------------------------------------------

    def refresh(self) -> None:
        """Show the chosen meter's readings and stored model (if any), default families ticked."""
        name = self.meter.currentText()
        project = self.session.project
        if project is None or not name:
            self._show_empty("This project has no meters yet: add files on the Files step.")
            return
        self.families.tick(ticked_families(project.meter_interval(name)))
        work = partial(meter_view, project, name)
        shown = self.meter.shown_as(name)
        self.runner.request(self._job(work, f"reading '{shown}'", self._show_view))

    def fit(self) -> None:
        """Backtest and compare the ticked families on the chosen meter; keep the best."""
        name = self.meter.currentText()
        project = self.session.project
        if project is None or not name:
            return
        families = self.families.ticked()
        if not families:
            self.notice.say("Tick at least one model family to fit.", "problem")
            return
        request = FitRequest(name, families, self.origins.value())
        work = partial(fit_report, project, request)
        self.backtest_page.start(len(families), request.origins)
        doing = f"fitting and comparing models of '{self.meter.shown_as(name)}'"
        self._backtest = self._job(work, doing, self._show, announce="Recommended", log=True)
        self.runner.request(self._backtest)
        self.go_to(BACKTEST)

    def use_selected(self) -> None:
        """Keep the model selected in the ranking as the meter's choice."""
        name, model = self.meter.currentText(), self.ranking.selected()
        project = self.session.project
        if project is None or not name or model is None:
            return
        words = f"use model '{self.ranking.row_of(model)['Model']}' for {self.meter.shown()}"
        remember = self.undo.made_on_worker  # Edit ▸ Undo takes the choice back
        work = partial(use_model_remembered, remember, project, name, model, words)
        doing = f"keeping another model for '{self.meter.shown_as(name)}'"
        self.runner.request(self._job(work, doing, self._show, announce="Now used"))

    def accept(self) -> None:
        """Keep the model in use and go on (the main window shows the Budget step)."""
        if self.report is not None and self.report.chosen is not None:
            self.accepted.emit(self.report.meter)

    def _selection_changed(self) -> None:
        selected = self.ranking.selected()
        chosen = None if self.report is None else self.report.chosen
        self.use_button.setEnabled(
            not self.runner.busy and selected is not None and selected != chosen
        )

    # -- work ---------------------------------------------------------------------------------

    def _job(
        self,
        work: Work,
        doing: str,
        done: Callable,
        announce: str | None = None,
        log: bool = False,
    ) -> Job:
        """``work`` whose result goes to ``done``; ``announce`` (e.g. "Recommended") words the
        notice of a kept model; with ``log`` its steps go to the backtest page. A newer request
        replaces it (:meth:`TaskRunner.request`)."""
        if announce is not None:
            done = partial(self._shown_and_announced, done, announce)
        return Job(
            work,
            doing,
            done,
            stopped=partial(self._cancelled, doing),
            failed=self._failed,
            progressed=self.backtest_page.progressed if log else None,
        )

    def _fitting(self) -> bool:
        """A backtest runs or waits to run (its page can be shown before any report)."""
        return self._backtest is not None and self.runner.has(self._backtest)

    def _work_started(self) -> None:
        self.fit_button.setEnabled(False)
        self.use_button.setEnabled(False)

    def _work_ended(self) -> None:
        self.fit_button.setEnabled(not self.runner.busy)
        self.go_to(self.page())

    def _failed(self, failure: Failure) -> None:
        self.backtest_page.stopped(failure.message)

    def _cancelled(self, doing: str) -> None:
        words = f"Stopped {doing}; nothing was kept."
        self.notice.say(words, "info")
        self.backtest_page.stopped(words)

    # -- showing ------------------------------------------------------------------------------

    def _show_empty(self, words: str) -> None:
        self.readings_page.show_words(words)
        self.families_page.set_readings(None)
        self._show_no_model(words)
        self.go_to(READINGS)

    def _show_no_model(self, words: str) -> None:
        self.report = None
        self.kept.clear()
        self.why.setHtml(f"<p>{escape(words)}</p>")
        self.choice_page.show_note(words)
        self.backtest.show_note(words)
        self.residuals.show_note(words)

    def _show_view(self, view: MeterView) -> None:
        if self.session.project is None:
            return  # the project closed meanwhile
        self.readings_page.show_brief(view.readings)
        self.families_page.set_readings(view.readings)
        self._show(view.report)

    def _show(self, report: ModelReport | None) -> None:
        if self.session.project is None:
            return
        if report is None:
            self._show_no_model(
                f"'{self.meter.currentText()}' has no fitted model yet: tick the models to "
                "compare on page 2 and press 'Fit and compare'."
            )
            self.go_to(self.page())
            return
        self.report = report
        self.kept.setText(report.kept)
        self.backtest_page.show_report(report)
        self.ranking_page.show_report(report)
        self.choice_page.show_report(report)
        self.go_to(self.page())

    def _shown_and_announced(
        self, show: Callable[[ModelReport], None], verb: str, report: ModelReport
    ) -> None:
        show(report)
        self._fitted(verb, report)

    def _fitted(self, verb: str, report: ModelReport) -> None:
        if report.chosen is None:
            self.notice.say("No model could be scored, so none was kept.", "problem")
            return
        self.model_kept.emit(report.meter)
        onwards = " Press Next to read the ranking." if self.page() == BACKTEST else ""
        self.notice.say(
            f"{verb} for '{self.meter.shown_as(report.meter)}': {report.chosen_label}. "
            f"{report.kept}.{onwards}",
            "done",
        )
