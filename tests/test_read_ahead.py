"""The streamed reader's read-ahead thread: closing the generator early never waits for the
reader thread from that thread itself (it once raised "cannot join current thread" when the
generator was collected on the reader thread during the data fuzz test)."""

from __future__ import annotations

import threading

from bayes.data.stream import read_ahead


def test_items_come_in_order():
    assert list(read_ahead(iter(range(7)))) == list(range(7))


def test_closed_from_the_reader_thread_itself_raises_nothing():
    # The source's next() runs on the reader thread; it closes the (suspended) generator there,
    # as garbage collection on that thread would. Before the fix the generator's clean-up
    # joined the reader thread from itself: RuntimeError("cannot join current thread").
    errors: list[BaseException] = []
    holder: list = []

    def source():
        yield 0
        try:
            holder[0].close()
        except BaseException as e:  # noqa: BLE001 - the test records whatever close raises
            errors.append(e)
        yield 1

    gen = read_ahead(source())
    holder.append(gen)
    assert next(gen) == 0
    # The reader thread is now reading item 1 and closes the generator meanwhile; wait for it.
    for t in [t for t in threading.enumerate() if t.name.startswith("bayes-read")]:
        t.join(timeout=10)
    assert errors == []


def test_closed_early_by_the_consumer_returns_at_once():
    gen = read_ahead(iter(range(100)))
    assert next(gen) == 0
    gen.close()  # an error downstream: no hang, no exception
