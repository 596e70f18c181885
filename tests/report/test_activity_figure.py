"""The activity-link figure draws both series on one time axis and returns a Figure."""

import numpy as np
from matplotlib.figure import Figure

from ttvkit.inference.activity_link import activity_link
from ttvkit.report.activity_figure import activity_link_figure


def test_figure_has_both_series_on_a_shared_axis(tmp_path):
    rng = np.random.default_rng(4)
    t_oc = np.sort(rng.uniform(2455000, 2461000, 60))
    oc = 50 / 86400 * np.sin(2 * np.pi * t_oc / 1800) + rng.normal(0, 8 / 86400, 60)
    t_ind = np.sort(rng.uniform(2455000, 2461000, 40))
    y = np.cos(2 * np.pi * t_ind / 1800) + rng.normal(0, 0.2, 40)
    link = activity_link(t_oc, oc, 8 / 86400, t_ind, y, 0.2, n_surrogates=49, seed=1)
    fig = activity_link_figure(link, t_oc, oc, 8 / 86400, t_ind, y, 0.2, indicator_label="ΔL/L (%)")
    assert isinstance(fig, Figure)
    top, bottom = fig.axes
    assert top.get_shared_x_axes().joined(top, bottom)
    assert any("lag" in t.get_text() for t in bottom.get_legend().get_texts())
    fig.savefig(tmp_path / "link.png")
    assert (tmp_path / "link.png").stat().st_size > 10_000
