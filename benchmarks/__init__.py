"""Speed and accuracy figures for frontshift (not tests: nothing here fails a build).

Run ``python -m benchmarks`` (or ``make bench``). Every module
``benchmarks/bench_*.py`` provides ``run() -> list[dict]``; each dict is one
figure with the keys

- ``name``: what was measured, in words,
- ``value``: the number,
- ``unit``: its unit (``s``, ``ms``, ``K``, ``x`` for a ratio...),
- ``target``: the target in words and numbers (``"<= 0.1 s"``) or ``""``,
- ``met``: True / False against the target, or None where there is none.

The runner prints one table and writes ``benchmarks/results.csv`` (or the
``--out`` path). Helpers for bench modules: :func:`best_time`, :func:`figure`.
"""

import time

__all__ = ["best_time", "figure"]


def best_time(func, *, repeat=5, min_time=0.2, max_calls=10_000):
    """Best wall-clock time of one call of ``func()`` [s].

    Calls ``func`` in batches long enough to be timed (at least ``min_time``
    seconds per batch, at most ``max_calls`` calls) and returns the best
    per-call time over ``repeat`` batches: the figure least disturbed by
    other work on the machine.

    Parameters
    ----------
    func : callable
        Called with no arguments.
    repeat : int
        Number of timed batches.
    min_time : float
        Target length of one batch [s].
    max_calls : int
        Upper bound on calls per batch.

    Returns
    -------
    float
        Seconds per call.
    """
    func()  # warm up (imports, caches, thread pools)
    t0 = time.perf_counter()
    func()
    one = max(time.perf_counter() - t0, 1e-9)
    number = int(min(max_calls, max(1, min_time / one)))
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        for _ in range(number):
            func()
        best = min(best, (time.perf_counter() - t0) / number)
    return best


def figure(name, value, unit, target="", met=None):
    """One benchmark figure as the runner expects it (see the module docstring)."""
    return {"name": name, "value": float(value), "unit": unit, "target": target, "met": met}
