"""The mesh and assembly caches are shared by the page's sessions (threads of one
process): every lookup is locked, an entry is built once, and clear_caches empties them
(issue 16: an unlocked check-then-move could raise KeyError when another session evicted
the entry in between)."""

from __future__ import annotations

import threading
import time

import capbench as cb
from capbench import capacitance as cc
from capbench.caches import Cache


def test_two_threads_build_an_entry_once_and_never_see_a_missing_key():
    cache = Cache("test", 4)
    built = []
    errors = []

    def make(k):
        def build():
            built.append(k)
            time.sleep(0.001)  # widen the window a racing thread would need
            return k * 10

        return build

    def worker(offset):
        try:
            for i in range(300):
                k = (i + offset) % 9  # more keys than room: constant eviction
                assert cache.get_or(k, make(k)) == k * 10
        except Exception as exc:  # the test reports any failure
            errors.append(exc)

    threads = [threading.Thread(target=worker, args=(n,)) for n in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert not errors, errors
    assert len(cache) <= 4
    assert cache.hits + cache.misses == 4 * 300
    assert len(built) == cache.misses


def test_a_build_may_use_the_same_cache():
    cache = Cache("nested", 8)
    assert cache.get_or("outer", lambda: cache.get_or("inner", lambda: 1) + 1) == 2
    assert "inner" in cache and "outer" in cache


def test_clear_caches_empties_the_solver_caches():
    fx = cb.parallel_discs(radius="11 mm", gap="1.3 mm")
    first = cb.solve(fx, rtol=1e-4)
    assert len(cc.MESHES) > 0 and len(cc.ASSEMBLIES) > 0
    cb.clear_caches()
    assert len(cc.MESHES) == 0 and len(cc.ASSEMBLIES) == 0 and len(cc.SOLUTIONS) == 0
    again = cb.solve(fx, rtol=1e-4)
    assert again is not first  # solved again, not the kept answer
    assert again.terminal == first.terminal  # a cold solve gives the same number


def test_the_same_question_is_answered_without_solving_again():
    fx = cb.parallel_discs(radius="12.5 mm", gap="0.9 mm")
    first = cb.solve(fx, rtol=1e-4)
    calls = []
    assert cb.solve(fx, rtol=1e-4, progress=lambda f, m: calls.append(f)) is first
    assert calls == [1.0]  # a progress bar still completes
    # another tolerance, another permittivity or another size is another question
    assert cb.solve(fx, rtol=1e-5) is not first
    other = cb.parallel_discs(radius="12.5 mm", gap="0.9 mm", medium_eps_r=2.0)
    assert cb.solve(other, rtol=1e-4).terminal != first.terminal
    bigger = cb.parallel_discs(radius="12.6 mm", gap="0.9 mm")
    assert cb.solve(bigger, rtol=1e-4).terminal != first.terminal


def test_a_memo_hit_does_not_block_other_threads_while_one_solves():
    """The solution memo is consulted and filled under its lock, but the solve itself
    runs unlocked: a second session asking for another fixture is not held up."""
    slow = cb.parallel_discs(radius="14 mm", gap="0.7 mm")
    quick = cb.parallel_discs(radius="9 mm", gap="2 mm")
    cb.solve(quick, rtol=1e-3)
    done = {}

    def ask_quick():
        t0 = time.perf_counter()
        cb.solve(quick, rtol=1e-3)
        done["quick"] = time.perf_counter() - t0

    t = threading.Thread(target=lambda: cb.solve(slow, rtol=1e-7))
    t.start()
    time.sleep(0.05)
    ask_quick()
    t.join()
    assert done["quick"] < 0.5
