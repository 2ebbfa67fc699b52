"""Work off the Python thread: the GIL is released while Spinfall computes, and Ctrl+C (or a
progress callback that raises) cancels a run, waits for the workers and raises cleanly."""

import json
import os
import signal
import threading
import time

import numpy as np
import pytest

import spinfall
from conftest import builtin_with


def long_scenario():
    """The built-in example with a 400-member dispersion set: tens of seconds of flights, far
    longer than any cancel below needs."""
    doc = builtin_with()
    doc["launches"][1]["dispersion"]["count"] = 400
    return spinfall.Scenario.from_json(json.dumps(doc))


class Ticker:
    """A Python thread that records the time whenever it gets to run (at most every 2 ms); it
    can only run while no other thread holds the GIL."""

    def __init__(self):
        self.times = []
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)

    def _run(self):
        last = 0.0
        while not self._stop.is_set():
            now = time.perf_counter()
            if now - last >= 0.002:
                self.times.append(now)
                last = now

    def __enter__(self):
        self._thread.start()
        time.sleep(0.05)
        return self

    def __exit__(self, *exc):
        self._stop.set()
        self._thread.join()

    def ticks_between(self, start, end):
        return sum(1 for t in self.times if start < t < end)


def idle_cpu_s(seconds=0.5):
    """CPU time this process uses while the calling thread sleeps."""
    before = time.process_time()
    time.sleep(seconds)
    return time.process_time() - before


def test_evaluate_releases_the_gil():
    field = spinfall.Field(spinfall.Shape.builtin(), density_kg_m3=1900.0)
    rng = np.random.default_rng(3)
    # A batch of about half a second on this build (dev or release), sized from a small one.
    probe = rng.uniform(-8000.0, 8000.0, size=(2000, 3))
    start = time.perf_counter()
    field.evaluate(probe)
    per_point_s = (time.perf_counter() - start) / len(probe)
    n = int(min(max(0.5 / per_point_s, 2000), 400_000))
    points = rng.uniform(-8000.0, 8000.0, size=(n, 3))
    with Ticker() as ticker:
        start = time.perf_counter()
        field.evaluate(points)
        end = time.perf_counter()
    assert end - start > 0.2, "the batch is too small to tell"
    # With the GIL held for the whole call the ticker could not run at all between its first
    # and last 50 ms (zero ticks); released, it runs all along (one tick per 2 ms when it gets a
    # core).
    assert ticker.ticks_between(start + 0.05, end - 0.05) >= 3


def test_fly_releases_the_gil():
    with Ticker() as ticker:
        start = time.perf_counter()
        spinfall.Scenario.builtin().fly()
        end = time.perf_counter()
    assert end - start > 0.2, "the run is too short to tell"
    assert ticker.ticks_between(start + 0.05, end - 0.05) >= 3


def test_a_keyboard_interrupt_from_the_progress_callback_cancels_the_run():
    scenario = long_scenario()
    seen = []
    raised_at = []

    def progress(stage, done, total):
        seen.append((stage, done, total))
        if stage == "flights":
            raised_at.append(time.perf_counter())
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        scenario.fly(progress=progress)
    stopped_s = time.perf_counter() - raised_at[0]
    assert seen[-1][0] == "flights" and seen[-1][2] == 410
    assert seen[-1][1] < 410
    # The cancel took effect within a few steps of the flights, not at the end of the run.
    assert stopped_s < 3.0, stopped_s
    # The workers have stopped: the process is idle once fly() has raised.
    assert idle_cpu_s() < 0.15


def test_ctrl_c_cancels_the_run_and_raises_keyboard_interrupt():
    scenario = long_scenario()
    timer = threading.Timer(0.5, os.kill, (os.getpid(), signal.SIGINT))
    start = time.perf_counter()
    timer.start()
    try:
        with pytest.raises(KeyboardInterrupt):
            scenario.fly()
    finally:
        timer.cancel()
    stopped = time.perf_counter() - start
    assert 0.5 <= stopped < 4.0, stopped
    assert idle_cpu_s() < 0.15
    # Nothing is left behind: the same scenario object flies again afterwards.
    assert len(spinfall.Scenario.builtin().fly()) == 16


def test_ctrl_c_interrupts_a_large_evaluate_between_chunks():
    field = spinfall.Field(spinfall.Shape.builtin(), density_kg_m3=1900.0)
    points = np.random.default_rng(5).uniform(-8000.0, 8000.0, size=(400_000, 3))
    timer = threading.Timer(0.5, os.kill, (os.getpid(), signal.SIGINT))
    start = time.perf_counter()
    timer.start()
    try:
        with pytest.raises(KeyboardInterrupt):
            field.evaluate(points)
    finally:
        timer.cancel()
    # The whole batch takes tens of seconds here; the interrupt lands after the current chunk
    # (about 20,000 points of this body).
    assert time.perf_counter() - start < 5.0
    assert idle_cpu_s(0.3) < 0.1


def test_ctrl_c_cancels_a_surface_map_too():
    # A map of the built-in body takes well under a second; interrupt at the first progress
    # report instead, through the same path as a signal.
    def progress(stage, done, total):
        raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        spinfall.Scenario.builtin().surface_map(progress=progress)
    assert idle_cpu_s(0.3) < 0.1
