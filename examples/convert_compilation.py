"""Put a mixed-standard compilation of mid-times into BJD_TDB and check it.

Runs on the invented demo scenario (the star Orvessa and its planet
Orvessa b; nothing here is a real object)::

    python examples/convert_compilation.py
"""

import tempfile
from pathlib import Path

import ttvkit
from ttvkit.demo import build_demo_scenario

with tempfile.TemporaryDirectory() as folder:
    paths = build_demo_scenario().write(folder)
    target = ttvkit.make_target("19:09:38.4", "+31:10:48")   # Orvessa (invented)
    table = ttvkit.TimingTable.read(paths["timings"], target=target)
    print(table)

    # Each source against a smooth ephemeris shared by all the others.
    for offset in ttvkit.source_offsets(table):
        print(f"{offset.source:42s} {offset.offset_s:+7.1f} ± {offset.error_s:5.1f} s")

    # Sources whose offset matches a relabelled time standard.
    for suspicion in table.check_standards():
        print("suspect:", suspicion.message())

    out = Path(folder) / "orvessa_b_bjd_tdb.ecsv"
    table.write(out)
    print("round trip exact:", (ttvkit.TimingTable.read(out).time == table.time).all())
