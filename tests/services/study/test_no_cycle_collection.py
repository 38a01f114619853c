"""The one pause of the cycle collector (`bulk_results.no_cycle_collection`): paused while
any holder is inside, resumed when the last one leaves, and only if it was running before."""

import gc
import threading

from app.services.study.bulk_results import no_cycle_collection


def test_the_collector_resumes_when_the_last_holder_leaves() -> None:
    """The other export comes first and leaves first: this one must still be paused (a
    per-holder 'was it running' would turn it back on here)."""
    assert gc.isenabled()
    other_in, this_in, other_out = threading.Event(), threading.Event(), threading.Event()
    seen: list[bool] = []

    def other_export() -> None:
        with no_cycle_collection():
            other_in.set()
            this_in.wait()
        other_out.set()

    thread = threading.Thread(target=other_export)
    thread.start()
    other_in.wait()
    with no_cycle_collection():
        this_in.set()
        other_out.wait()
        seen.append(gc.isenabled())
    thread.join()
    assert seen == [False]
    assert gc.isenabled()


def test_a_collector_paused_before_stays_paused() -> None:
    gc.disable()
    try:
        with no_cycle_collection(), no_cycle_collection():
            assert not gc.isenabled()
        assert not gc.isenabled()
    finally:
        gc.enable()


def test_the_collector_resumes_after_an_error() -> None:
    try:
        with no_cycle_collection():
            raise ValueError("the export failed")
    except ValueError:
        pass
    assert gc.isenabled()
