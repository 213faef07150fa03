"""Input speed: reading a case of explicit lanes and building its network, at 100,000 lanes and more.

One command::

    python benchmarks/input_speed.py [--sizes 100x1000,250x1000] [--forms lanes,matrix] [--repeats 1]
                                     [--profile] [--out FILE]

Each size ``n x m`` is a capacitated facility-location instance of ``benchmarks/cfl.py`` (the
scheme of Cornuéjols, Sridharan & Thizy 1991, capacity ratio 3, seed 0): one plant → n candidate
DCs → m customers, written as a case folder of CSV files in one of two forms:

- **lanes**: ``lanes.csv`` with one row per lane (n plant→DC rows and n × m DC→customer rows, each with
  its cost per unit, distance 0 and transit 0 days), as a user would export a lane list;
- **matrix**: the n plant→DC lanes in ``lanes.csv`` and the DC→customer costs as ``lane_matrix.csv``,
  one row per DC and one column per customer (measure ``cost_per_unit``; distance and transit
  computed from the coordinates, all 0 here).

Every measurement runs in a fresh subprocess (so peak memory is its own) and times, in order:
``load_case`` (read, type, validate, reachability: the lane table is built here once and kept on
the case), ``case_lanes`` (reuses it), ``build_network`` (arcs, per-unit costs) — the total of those
three is the figure the target (≤ 5 s at 100,000 lanes) counts, in wall time and in the process's CPU
time (steadier on a shared machine) — and, apart, ``build_model`` (the
Pyomo model and the matrix row families).  The table is printed with the machine's load average
(``os.getloadavg``) and written as Markdown to ``--out`` when given.  ``--profile`` prints the
cProfile of the first measurement's load and network build (the 30 costliest calls).
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))
if str(ROOT / "benchmarks") not in sys.path:
    sys.path.insert(0, str(ROOT / "benchmarks"))

from cfl import instance  # noqa: E402

SETTINGS = "[inventory]\nsafety_stock = false\n"


def write_case(folder: Path, n: int, m: int, form: str) -> int:
    """The instance ``n x m`` (capacity ratio 3, seed 0) as a case folder in ``form``; returns its lane count."""
    inst = instance(n, m, 3.0, 0)
    d, s, f, c = inst["d"], inst["s"], inst["f"], inst["c"]
    dcs, customers = [f"D{i}" for i in range(n)], [f"C{j}" for j in range(m)]
    folder.mkdir(parents=True)
    (folder / "settings.toml").write_text(SETTINGS, encoding="utf-8")
    pd.DataFrame([{"product": "P", "unit_weight_kg": 0, "unit_value": 0}]).to_csv(folder / "products.csv", index=False)
    pd.DataFrame([{"plant": "F", "product": "P", "lat": 0, "lon": 0}]).to_csv(folder / "plants.csv", index=False)
    pd.DataFrame({"dc": dcs, "lat": 0, "lon": 0, "fixed_cost": f, "capacity": s}).to_csv(
        folder / "dcs.csv", index=False
    )
    pd.DataFrame({"customer": customers, "lat": 0, "lon": 0}).to_csv(folder / "customers.csv", index=False)
    pd.DataFrame({"customer": customers, "product": "P", "quantity": d}).to_csv(folder / "demand.csv", index=False)
    pd.DataFrame([{"mode": "m", "cost_per_tonne_km": 0, "speed_km_per_day": 1, "generate_lanes": "false"}]).to_csv(
        folder / "modes.csv", index=False
    )
    unit = c / d[None, :]  # cost of serving all of j from i, per unit of j's demand
    head = pd.DataFrame({"origin": "F", "destination": dcs, "mode": "m", "distance_km": 0.0, "transit_days": 0.0})
    head["cost_per_unit"] = 0.0
    if form == "lanes":
        ii, jj = np.meshgrid(np.arange(n), np.arange(m), indexing="ij")
        body = pd.DataFrame(
            {
                "origin": np.asarray(dcs)[ii.ravel()],
                "destination": np.asarray(customers)[jj.ravel()],
                "mode": "m",
                "distance_km": 0.0,
                "transit_days": 0.0,
                "cost_per_unit": unit.ravel(),
            }
        )
        pd.concat([head, body], ignore_index=True).to_csv(folder / "lanes.csv", index=False)
    elif form == "matrix":
        head.to_csv(folder / "lanes.csv", index=False)
        wide = pd.DataFrame(unit, columns=customers)
        wide.insert(0, "measure", "cost_per_unit")
        wide.insert(0, "mode", "m")
        wide.insert(0, "origin", dcs)
        wide.to_csv(folder / "lane_matrix.csv", index=False)
    else:
        raise ValueError(f"unknown form {form!r}")
    return n + n * m


def measure(n: int, m: int, form: str, profile: bool = False) -> dict:
    """One measurement in this process (see the module docstring)."""
    from netopt.data.io import load_case
    from netopt.model import build_model
    from netopt.network.arcs import build_network
    from netopt.network.lanes import case_lanes

    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp) / "case"
        lanes_given = write_case(folder, n, m, form)
        files_mb = sum(p.stat().st_size for p in folder.iterdir()) / 1e6
        prof = None
        if profile:
            import cProfile

            prof = cProfile.Profile()
            prof.enable()
        c0, t0 = time.process_time(), time.perf_counter()
        case = load_case(folder)
        t1 = time.perf_counter()
        lanes = case_lanes(case)
        t2 = time.perf_counter()
        net = build_network(case, lanes)
        t3, c3 = time.perf_counter(), time.process_time()
        if prof is not None:
            prof.disable()
            import pstats

            pstats.Stats(prof, stream=sys.stderr).sort_stats("cumulative").print_stats(30)
        build_model(net)
        t4 = time.perf_counter()
    return {
        "size": f"{n}x{m}",
        "form": form,
        "lanes_given": lanes_given,
        "lanes": len(lanes),
        "arcs": len(net.arcs),
        "files_mb": files_mb,
        "load_s": t1 - t0,
        "lanes_s": t2 - t1,
        "network_s": t3 - t2,
        "total_s": t3 - t0,
        "cpu_s": c3 - c0,
        "model_s": t4 - t3,
        "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
    }


def run_one(n: int, m: int, form: str, profile: bool) -> dict:
    """:func:`measure` in a fresh subprocess (its own peak memory)."""
    cmd = [sys.executable, __file__, "--worker", f"{n}x{m}", form] + (["--profile"] if profile else [])
    p = subprocess.run(cmd, capture_output=True, text=True, cwd=str(ROOT))
    if profile:
        print(p.stderr, file=sys.stderr)
    if p.returncode != 0:
        raise RuntimeError(f"{n}x{m} {form}: {p.stderr[-2000:]}")
    return json.loads(p.stdout.strip().splitlines()[-1])


def markdown(rows: list[dict], load: tuple[float, float, float]) -> str:
    head = (
        "| size | form | lanes | arcs | files (MB) | load_case (s) | lanes (s) | network (s) | **total (s)** "
        "| CPU (s) | model build (s) | peak (MB) |\n|---|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|\n"
    )
    body = "".join(
        f"| {r['size']} | {r['form']} | {r['lanes']:,} | {r['arcs']:,} | {r['files_mb']:.1f} | {r['load_s']:.2f} | "
        f"{r['lanes_s']:.2f} | {r['network_s']:.2f} | **{r['total_s']:.2f}** | {r['cpu_s']:.2f} | {r['model_s']:.2f} | "
        f"{r['peak_mb']:,.0f} |\n"
        for r in rows
    )
    return (
        f"Load average before the run: {load[0]:.2f}, {load[1]:.2f}, {load[2]:.2f} (1, 5, 15 min); "
        f"{os.cpu_count()} cores.\n\n" + head + body
    )


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--sizes", default="100x1000,250x1000", help="n x m instances, comma-separated")
    ap.add_argument("--forms", default="lanes,matrix", help="lanes and/or matrix")
    ap.add_argument("--repeats", type=int, default=1, help="measurements of each size and form")
    ap.add_argument("--profile", action="store_true", help="print the profile of the first measurement")
    ap.add_argument("--out", default=None, help="also write the table as Markdown here")
    ap.add_argument("--worker", nargs=2, metavar=("SIZE", "FORM"), help=argparse.SUPPRESS)
    a = ap.parse_args(argv)
    if a.worker:
        n, m = (int(x) for x in a.worker[0].split("x"))
        print(json.dumps(measure(n, m, a.worker[1], a.profile)))
        return 0
    load = os.getloadavg()
    rows = []
    first = True
    for size in (s.strip() for s in a.sizes.split(",") if s.strip()):
        n, m = (int(x) for x in size.split("x"))
        for form in (f.strip() for f in a.forms.split(",") if f.strip()):
            for _ in range(a.repeats):
                r = run_one(n, m, form, a.profile and first)
                first = False
                rows.append(r)
                print(f"  {size} {form}: total {r['total_s']:.2f} s", file=sys.stderr)
    md = markdown(rows, load)
    print(md)
    if a.out:
        Path(a.out).write_text(md, encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
