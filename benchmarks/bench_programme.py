"""Renewal programme at scale: every main of a large register valued and scheduled.

Run: ``python benchmarks/bench_programme.py [--mains N] [--million] [--dask-mains N]``.
The demo study (40-year horizon, a 10-year programme, growth fitted from the register) over
invented registers (:func:`pipeopt.register.invented_register`, seeded):

(a) N mains (100,000 by default) in one process: reading and checking the rows, valuing every
    main in every year of action, and scheduling the programme, each timed; peak resident
    memory of the process;
(b) the same register valued on a Dask LocalCluster (two worker processes, one thread each,
    50,000 rows a partition), twice (the first run pays the workers' imports), for the ratio
    to (a) measured in the same run, and the check that the two give the same numbers bit for
    bit;
(c) with ``--million``: 1,000,000 mains from a Parquet file (row groups of 50,000 rows) valued
    on the same kind of cluster and scheduled; the peak resident memory of the client and of
    each worker process (each worker holds one partition at a time, so its memory is bounded
    by the partition size, not the register's).

Each part runs in its own child process, so that each peak of memory is that part's own.
Prints the figures and the ratios. Not a test: nothing fails on a slow machine.
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

os.environ.setdefault("MPLBACKEND", "Agg")


def _peak_mib() -> float:
    """Peak resident memory of this process [MiB] (Linux reports kilobytes)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def part_inprocess(n: int) -> dict:
    from pipeopt.programme import ProgrammeStudy
    from pipeopt.register import invented_register

    study = ProgrammeStudy.demo()
    frame = invented_register(n, seed=2027)
    t0 = time.perf_counter()
    ev = study.evaluate(frame, progress=False)
    t1 = time.perf_counter()
    result = study.schedule(ev)
    t2 = time.perf_counter()
    return {"mains": n, "valued": len(ev.table), "evaluate_s": t1 - t0, "schedule_s": t2 - t1,
            "total_s": t2 - t0, "method": result.plan.method, "gap": result.plan.gap,
            "pairs": result.plan.pairs, "renewed": int((result.mains["status"] == "renew").sum()),
            "peak_mib": _peak_mib(), "digest": _digest(ev)}


def _digest(ev) -> str:
    import hashlib

    h = hashlib.sha256()
    h.update(ev.table.to_csv(float_format="%.17g").encode())
    h.update(ev.npv.tobytes())
    return h.hexdigest()[:16]


def _cluster():
    from distributed import Client, LocalCluster

    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                           dashboard_address=None, memory_limit="3GiB")
    return cluster, Client(cluster)


def _worker_peaks(client) -> list[float]:
    def peak() -> float:
        import resource as r

        return r.getrusage(r.RUSAGE_SELF).ru_maxrss / 1024.0

    return sorted(client.run(peak).values())


def part_dask(n: int, rows: int) -> dict:
    from pipeopt.programme import ProgrammeStudy
    from pipeopt.register import invented_register

    study = ProgrammeStudy.demo()
    frame = invented_register(n, seed=2027)
    cluster, client = _cluster()
    try:
        t0 = time.perf_counter()
        ev = study.evaluate(frame, dask=client, partition_rows=rows, progress=False)
        t1 = time.perf_counter()
        ev = study.evaluate(frame, dask=client, partition_rows=rows, progress=False)
        t2 = time.perf_counter()
        workers = _worker_peaks(client)
    finally:
        client.close()
        cluster.close()
    return {"mains": n, "cold_s": t1 - t0, "evaluate_s": t2 - t1, "partitions": ev.partitions,
            "worker_peak_mib": workers, "peak_mib": _peak_mib(), "digest": _digest(ev)}


def part_million(n: int, rows: int) -> dict:
    from pipeopt.programme import ProgrammeStudy
    from pipeopt.register import invented_register

    study = ProgrammeStudy.demo()
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "register.parquet"
        t = time.perf_counter()
        invented_register(n, seed=2027).to_parquet(path, row_group_size=rows)
        made = time.perf_counter() - t
        before = _peak_mib()
        cluster, client = _cluster()
        try:
            t0 = time.perf_counter()
            ev = study.evaluate(path, dask=client, partition_rows=rows, progress=False)
            t1 = time.perf_counter()
            workers = _worker_peaks(client)
        finally:
            client.close()
            cluster.close()
        t2 = time.perf_counter()
        result = study.schedule(ev)
        t3 = time.perf_counter()
    return {"mains": n, "register_written_s": made, "evaluate_s": t1 - t0,
            "schedule_s": t3 - t2, "partitions": ev.partitions, "rows_per_partition": rows,
            "valued": len(ev.table), "method": result.plan.method, "gap": result.plan.gap,
            "worker_peak_mib": workers, "client_peak_before_mib": before,
            "client_peak_mib": _peak_mib()}


def _child(part: str, n: int, rows: int) -> dict:
    proc = subprocess.run([sys.executable, __file__, "--child", part, "--mains", str(n),
                           "--rows", str(rows)], capture_output=True, text=True)
    if proc.returncode != 0:
        raise RuntimeError(proc.stderr[-2000:])
    return json.loads(proc.stdout.strip().splitlines()[-1])


def main(n: int, million: bool, dask_mains: int, rows: int = 50_000) -> dict:
    print(f"renewal programme benchmark: demo study (40 years, 10 programme years), invented "
          f"register, {os.cpu_count()} cores")
    a = _child("inprocess", n, rows)
    print(f"  (a) {a['mains']:>9,} mains in process: read and check + value "
          f"{a['evaluate_s']:6.2f} s, schedule {a['schedule_s']:6.2f} s ({a['method']}, gap "
          f"{a['gap'] * 100:.3f} %, {a['pairs']:,} main-years), total {a['total_s']:6.2f} s "
          f"= {a['mains'] / a['total_s']:,.0f} mains/s; peak memory {a['peak_mib']:,.0f} MiB")
    b = _child("dask", n, rows)
    same = "identical" if a["digest"] == b["digest"] else "DIFFERENT"
    print(f"  (b) {b['mains']:>9,} mains on Dask (2 worker processes, {b['partitions']} "
          f"partitions): value {b['cold_s']:6.2f} s on new workers (their imports included), "
          f"{b['evaluate_s']:6.2f} s again; workers' peak memory "
          f"{', '.join(f'{x:,.0f}' for x in b['worker_peak_mib'])} MiB; results {same} to (a)")
    print(f"      ratio of valuing times, Dask (again) / in process: "
          f"{b['evaluate_s'] / a['evaluate_s']:.2f}")
    out = {"a": a, "b": b}
    if million:
        c = _child("million", dask_mains, rows)
        print(f"  (c) {c['mains']:>9,} mains from Parquet on Dask ({c['partitions']} "
              f"partitions of {c['rows_per_partition']:,} rows): value {c['evaluate_s']:6.2f} s "
              f"= {c['mains'] / c['evaluate_s']:,.0f} mains/s, schedule {c['schedule_s']:6.2f} s "
              f"({c['method']}, gap {c['gap'] * 100:.3f} %)")
        print(f"      workers' peak memory {', '.join(f'{x:,.0f}' for x in c['worker_peak_mib'])}"
              f" MiB; client peak {c['client_peak_mib']:,.0f} MiB (of which "
              f"{c['client_peak_before_mib']:,.0f} MiB making the register before the run)")
        out["c"] = c
    return out


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--mains", type=int, default=100_000)
    parser.add_argument("--million", action="store_true",
                        help="also value 1,000,000 mains on Dask (a few minutes)")
    parser.add_argument("--dask-mains", type=int, default=1_000_000)
    parser.add_argument("--rows", type=int, default=50_000, help="rows per Dask partition")
    parser.add_argument("--child", choices=("inprocess", "dask", "million"),
                        help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        run = {"inprocess": lambda: part_inprocess(args.mains),
               "dask": lambda: part_dask(args.mains, args.rows),
               "million": lambda: part_million(args.mains, args.rows)}[args.child]
        print(json.dumps(run()))
    else:
        main(args.mains, args.million, args.dask_mains, args.rows)
