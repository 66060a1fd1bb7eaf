"""The public API: what `import envelope` offers, and that it leaves matplotlib alone."""

from __future__ import annotations

import os
import subprocess
import sys

import envelope


def test_public_names_resolve():
    for name in envelope.__all__:
        assert getattr(envelope, name) is not None, name
    assert callable(envelope.load_survey) and callable(envelope.assess_survey)
    assert envelope.radiometry.object_temperature(20.0, 1.0, 20.0) == 20.0


def test_importing_everything_keeps_the_users_matplotlib_backend():
    # A notebook user's backend must survive importing envelope and drawing a figure: the
    # figures are drawn on their own Agg canvas, never through a global backend switch.
    code = ("import envelope, envelope.outputs, envelope.report, envelope.plots.draw, matplotlib\n"
            "from envelope.plots.common import new_figure, save\n"
            "import numpy as np, tempfile, pathlib\n"
            "fig = new_figure(40.0, 30.0)\n"
            "fig.add_subplot().imshow(np.zeros((8, 8)))\n"
            "save(fig, pathlib.Path(tempfile.mkdtemp()) / 'f.png')\n"
            "print(matplotlib.get_backend())\n")
    env = dict(os.environ, MPLBACKEND="svg")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env,
                         check=True).stdout.strip()
    assert out == "svg"
