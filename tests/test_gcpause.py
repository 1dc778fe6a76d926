"""tuning.gcpause: the collector is paused inside, restored after, and collects when asked."""

import gc
import weakref

from tuning.gcpause import gc_paused


class Node:
    pass


def _cycle():
    a, b = Node(), Node()
    a.other, b.other = b, a
    return weakref.ref(a)


def test_paused_inside_and_restored_after():
    assert gc.isenabled()
    with gc_paused():
        assert not gc.isenabled()
    assert gc.isenabled()
    gc.disable()
    try:
        with gc_paused():
            pass
        assert not gc.isenabled()  # a collector that was off stays off
    finally:
        gc.enable()


def test_collects_every_n_steps():
    with gc_paused(collect_every=2) as step:
        ref = _cycle()
        step()
        assert ref() is not None  # not collected after one step
        step()
        assert ref() is None  # collected at the second


def test_restored_when_the_block_raises():
    try:
        with gc_paused():
            raise RuntimeError("boom")
    except RuntimeError:
        pass
    assert gc.isenabled()
