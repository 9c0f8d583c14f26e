"""The shared progress / time budget / interrupt helper (flowkit.progress).

Exact identities of the bookkeeping: work counted, the flag and reason set, the
bar written to stderr (never stdout) and only after its delay.
"""

import time

import pytest

from flowkit.errors import FlowkitError
from flowkit.progress import Budget, check_max_seconds


def test_full_run_is_not_partial_and_counts_every_chunk():
    with Budget(total=5, desc="t", progress=False) as run:
        seen = list(run.iterate(range(5)))
    assert seen == [0, 1, 2, 3, 4] and run.done == 5
    assert not run.partial and run.reason == ""


def test_time_budget_stops_between_chunks_after_at_least_one():
    with Budget(total=100, desc="t", progress=False, max_seconds=0.05) as run:
        for _ in run.iterate(range(100)):
            time.sleep(0.03)
    assert run.timed_out and run.partial
    assert 1 <= run.done < 100
    assert "max_seconds" in run.reason and f"{run.done} of 100" in run.reason


def test_interrupt_keeps_finished_chunks():
    with Budget(total=10, desc="t", progress=False) as run:
        for i in run.iterate(range(10)):
            if i == 3:
                raise KeyboardInterrupt
    assert run.interrupted and run.done == 3 and "interrupted" in run.reason


def test_interrupt_before_any_finished_chunk_propagates():
    with pytest.raises(KeyboardInterrupt):
        with Budget(total=10, desc="t", progress=False) as run:
            for _ in run.iterate(range(10)):
                raise KeyboardInterrupt


def test_other_errors_propagate():
    with pytest.raises(ValueError):
        with Budget(total=2, desc="t", progress=False) as run:
            run.advance()
            raise ValueError("boom")


def test_bar_goes_to_stderr_after_its_delay_only(capsys):
    with Budget(total=3, desc="slowjob", delay=0.0) as run:
        for _ in run.iterate(range(3)):
            time.sleep(0.01)
    out, err = capsys.readouterr()
    assert out == "" and "slowjob" in err
    with Budget(total=3, desc="quickjob", delay=60.0) as run:
        list(run.iterate(range(3)))
    out, err = capsys.readouterr()
    assert out == "" and "quickjob" not in err


@pytest.mark.parametrize("bad", [0, -1, float("inf"), float("nan"), "soon"])
def test_max_seconds_is_checked(bad):
    with pytest.raises(FlowkitError, match="max_seconds"):
        check_max_seconds(bad)
    assert check_max_seconds(None) is None and check_max_seconds(2) == 2.0
