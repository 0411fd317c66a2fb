"""Benchmark: kernel-side work of the side-by-side view per slider update (no browser).

Prints the median time posekit's SingularityView spends in Python when the position
slider moves one step (patch four marker traces, the step line and its label, the
family plane and the readout HTML), and when a held angle moves (new sweep of 61
steps, every line of the sweep plot patched), next to a reference measured in this
process: a bare one-trace plotly FigureWidget whose y data is replaced (61 points)
inside one batch_update -- the least any plotly widget update costs.  Then the ratios.
The issue's target for the explorer (kernel side <= 3 ms median) is printed beside
them for comparison; it is not a test.
"""

from __future__ import annotations

import time

import numpy as np
import plotly.graph_objects as go

from posekit.widgets import SingularityView

REPEAT = 120


def median_ms(fn, n=REPEAT) -> float:
    times = []
    for k in range(n):
        start = time.perf_counter()
        fn(k)
        times.append(time.perf_counter() - start)
    return 1e3 * float(np.median(times))


def main() -> None:
    view = SingularityView(angles=(30.0, 0.0, 20.0), swept=1, convention="sequence=z-y-x unit=degrees")
    position = median_ms(lambda k: setattr(view, "position", 1 + k % 59))
    held = median_ms(lambda k: setattr(view, "angles", (30.0 + (k % 40), 0.0, 20.0)), 40)

    bare = go.FigureWidget(go.Figure(go.Scatter(x=np.arange(61.0), y=np.zeros(61))))
    rows = [np.sin(np.arange(61.0) * 0.1 + k) for k in range(REPEAT)]

    def bare_update(k):
        with bare.batch_update():
            bare.data[0].y = rows[k % REPEAT]

    reference = median_ms(bare_update)
    print(f"bare one-trace FigureWidget update (61 points):   {reference:7.3f} ms median")
    print(f"SingularityView, position slider one step:        {position:7.3f} ms median"
          f"   ratio {position / reference:5.2f}")
    print(f"SingularityView, held angle moved (new sweep):    {held:7.3f} ms median"
          f"   ratio {held / reference:5.2f}")
    print("the explorer's target, for comparison:     3.000 ms median (kernel side)")


if __name__ == "__main__":
    main()
