"""Ctrl-C stops a long trace: the GIL is released while the library works,
and the trace asks Python for a pending signal through
TraceOptions::interrupt_requested (once per knot, at most every 50 ms)."""

import os
import signal
import subprocess
import sys
import textwrap
import time

LONG_TRACE = textwrap.dedent("""
    import sys, time
    import numpy as np
    import knotpath
    rng = np.random.default_rng(5)
    x = rng.standard_normal((500, 30000)).T.copy().T  # Fortran-ordered, 120 MB
    y = rng.standard_normal(500)
    start = time.monotonic()
    try:  # a signal before the trace starts is a KeyboardInterrupt too (not a failure)
        print("tracing", flush=True)
        knotpath.trace(x, y)
    except KeyboardInterrupt:
        print(f"interrupted after {time.monotonic() - start:.2f} s", flush=True)
        sys.exit(3)
    print(f"finished after {time.monotonic() - start:.2f} s", flush=True)
""")


def test_ctrl_c_stops_a_long_trace_within_a_fraction_of_a_second(tmp_path):
    script = tmp_path / "long_trace.py"
    script.write_text(LONG_TRACE)
    child = subprocess.Popen([sys.executable, str(script)], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                             text=True, env=dict(os.environ))
    assert child.stdout.readline().strip() == "tracing"
    time.sleep(0.5)  # well inside the trace (about 500 knots of 15 ms each)
    sent = time.monotonic()
    child.send_signal(signal.SIGINT)
    try:
        out, err = child.communicate(timeout=20)
    except subprocess.TimeoutExpired:
        child.kill()  # the trace goes on for minutes: not interrupted
        child.communicate()
        raise
    stopped_after = time.monotonic() - sent
    assert child.returncode == 3, (out, err)
    assert out.startswith("interrupted"), out
    # One knot (15 ms) plus the 50 ms polling interval, with room for a
    # shared machine; without the hook the trace would run to its end first.
    assert stopped_after < 1.0, (stopped_after, out)


def test_other_python_threads_run_while_a_trace_works():
    # The trace releases the GIL: a Python thread keeps counting meanwhile.
    # Were the GIL held, the counter would stand still for the whole trace.
    import threading

    import numpy as np

    import knotpath

    rng = np.random.default_rng(9)
    x = np.asfortranarray(rng.standard_normal((300, 8000)))  # a dense copy, 200 knots: 0.3 to 2 s
    y = rng.standard_normal(300)
    done = threading.Event()
    ticks = []

    def count():
        while not done.is_set():
            ticks.append(time.monotonic())
            time.sleep(0.001)

    counter = threading.Thread(target=count)
    counter.start()
    time.sleep(0.05)
    start = time.monotonic()
    knotpath.trace(x, y, max_knots=200, storage="dense")
    end = time.monotonic()
    done.set()
    counter.join()
    during = [t for t in ticks if start <= t <= end]
    assert end - start > 0.2, "the trace was too short to tell"
    # At least one tick per 50 ms of trace (the counter asks for one per ms;
    # a loaded machine may delay it); with the GIL held there is one or two.
    assert len(during) >= max(5, (end - start) / 0.05), (len(during), end - start)
