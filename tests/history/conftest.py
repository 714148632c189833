"""Fixtures for the history tests: the invented per-unit table and its CSV file."""

import pytest
from history_frames import make_frame, make_visits, write_csv


@pytest.fixture
def frame():
    """The invented table (see ``history_frames.make_frame``)."""
    return make_frame()


@pytest.fixture
def history_csv(tmp_path, frame):
    """``frame`` written to a CSV file in the test's temporary folder."""
    return write_csv(tmp_path, frame)


@pytest.fixture(scope="session")
def visits():
    """Invented visits of returning units over 30 days (see ``history_frames.make_visits``)."""
    return make_visits()


@pytest.fixture
def visits_csv(tmp_path, visits):
    """``visits`` written to a CSV file in the test's temporary folder."""
    return write_csv(tmp_path, visits, "visits.csv")
