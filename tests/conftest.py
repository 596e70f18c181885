"""Shared fixtures: the demo scenario's files, written once per session."""

import matplotlib
import pytest

matplotlib.use("Agg")


@pytest.fixture(scope="session")
def demo_inputs(tmp_path_factory):
    from ttvkit.demo import build_demo_scenario

    folder = tmp_path_factory.mktemp("demo_inputs")
    return build_demo_scenario().write(folder)


@pytest.fixture(scope="session")
def demo_table(demo_inputs):
    from ttvkit import TimingTable
    from ttvkit.demo import target

    return TimingTable.read(demo_inputs["timings"], target=target())
