"""Tests for emulate.audio.pipeline: order kept, errors handed over, threads always stopped."""

import threading
import time

import pytest

from emulate.audio.pipeline import read_ahead, write_behind


def pipeline_threads():
    return [t for t in threading.enumerate() if t.name.startswith("emulate-")]


def failing_after(n, error):
    for i in range(n):
        yield i
    raise error


class TestReadAhead:
    @pytest.mark.parametrize("depth", [1, 3])
    def test_same_items_in_order(self, depth):
        with read_ahead(iter(range(100)), depth=depth) as items:
            assert list(items) == list(range(100))
        assert not pipeline_threads()

    def test_error_raised_in_place(self):
        got = []
        with pytest.raises(OSError, match="disk gone"):
            with read_ahead(failing_after(3, OSError("disk gone"))) as items:
                got.extend(items)
        assert got == [0, 1, 2] and not pipeline_threads()

    def test_caller_stopping_early_stops_the_reader(self):
        def endless():
            while True:
                yield 0
        with pytest.raises(KeyboardInterrupt):
            with read_ahead(endless()) as items:
                next(items)
                raise KeyboardInterrupt
        assert not pipeline_threads()


class TestWriteBehind:
    def test_everything_written_in_order(self):
        got = []
        with write_behind(got.append, depth=1) as put:
            for i in range(50):
                put(i)
        assert got == list(range(50)) and not pipeline_threads()

    def test_writer_error_reaches_the_caller(self):
        def write(item):
            if item == 2:
                raise OSError("no space left")
        with pytest.raises(OSError, match="no space left"):
            with write_behind(write) as put:
                for i in range(1000):
                    put(i)
                    time.sleep(0.001)
        assert not pipeline_threads()

    def test_caller_error_drops_the_rest_and_stops(self):
        got = []

        def slow(item):
            time.sleep(0.01)
            got.append(item)
        with pytest.raises(KeyboardInterrupt):
            with write_behind(slow, depth=2) as put:
                for i in range(3):
                    put(i)
                raise KeyboardInterrupt
        assert got == list(range(len(got))) and not pipeline_threads()
