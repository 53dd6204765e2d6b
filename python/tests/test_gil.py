"""The GIL is released while records are analysed: another Python thread runs meanwhile. Counted in
loop iterations, not timed (a loaded machine makes timings flaky)."""

import sys
import threading

import spurline
from conftest import tone


def iterations_during(call):
    """Iterations another thread's loop makes while `call` runs. The switch interval is raised to 0.5 s
    (each call here takes well under that) so that a thread holding the GIL is not made to give it up
    within the call: the loop can only run while the call has released the GIL."""
    done = threading.Event()
    count = [0]

    def spin():
        while not done.is_set():
            count[0] += 1

    old = sys.getswitchinterval()
    sys.setswitchinterval(0.5)
    t = threading.Thread(target=spin)
    try:
        t.start()
        before = count[0]
        call()
        during = count[0] - before
    finally:
        done.set()
        sys.setswitchinterval(old)
        t.join()
    return during


def test_the_gil_is_released_while_analysing():
    xs = [tone(1 << 18, 10007 + 2 * i, 14, seed=i) for i in range(4)]
    many = iterations_during(lambda: spurline.analyze_many(xs, fs=1e6, bits=14, jobs=2))
    one = iterations_during(lambda: spurline.analyze(xs[0], fs=1e6, bits=14, keep_traces=False))
    # Reference: Python code of a few tens of milliseconds keeps the GIL (shorter than the switch
    # interval), so the loop barely runs.
    held = iterations_during(lambda: sum(i * i for i in range(200_000)))
    assert many > 10_000 and one > 10_000, (many, one)
    assert held < many / 10, (held, many)
