"""Element maps and batches: whole-process and per-stage timings, peak memory, throughput.

Prints figures beside a baseline measured in the same run; asserts nothing.

    uv run --extra test python benchmarks/bench_maps.py            # 100×100 + 300×300 + batch
    uv run --extra test python benchmarks/bench_maps.py --full     # also 1000×1000 (~4 GB)

Stages
------
A. 100×100 px × 2,048 channels end to end on a LocalCluster with 2 workers
   (write cube, open, sum pass, identify, screen, fit pass, write products);
   baseline: scipy.optimize.nnls one pixel at a time (500 pixels, scaled).
B. out of core: an uint16 cube on disk (300×300 by default, 1000×1000 with
   --full), 1 vs 2 workers; peak resident memory of this process plus its
   workers, sampled every 0.1 s; throughput in spectra/s.
C. batch: 500 single spectra, ``run_batch`` on 2 workers vs a sequential loop
   of ``analyse_input`` in this process.

All data are INVENTED (the demo painting's recipe, workbench.maps.demo).
"""

from __future__ import annotations

import argparse
import os
import tempfile
import threading
import time
from pathlib import Path

import h5py
import numpy as np
import psutil

from workbench.maps import Instrument, Runner, open_cube, run_maps
from workbench.maps.demo import painting_truth
from workbench.maps.store import write_products
from workbench.maps.synth import synthesise_cube

INST = Instrument(offset_eV=0.0, gain_eV_per_channel=10.0, noise_fwhm_eV=80.0, pixel_size_um=500)
NCH = 2048


class PeakRSS:
    """Peak summed RSS of this process and its children (sampled)."""

    def __init__(self) -> None:
        self.peak = 0
        self._stop = threading.Event()
        self._t = threading.Thread(target=self._run, daemon=True)

    def _run(self) -> None:
        me = psutil.Process()
        while not self._stop.is_set():
            total = 0
            for p in [me, *me.children(recursive=True)]:
                try:
                    total += p.memory_info().rss
                except psutil.Error:
                    pass
            self.peak = max(self.peak, total)
            time.sleep(0.1)

    def __enter__(self) -> PeakRSS:
        self._t.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self._stop.set()
        self._t.join()


def write_cube(path: Path, ny: int, nx: int, slab: int = 20) -> float:
    """Synthesise the painting at ny×nx into an HDF5 uint16 cube, slab by slab."""
    t0 = time.perf_counter()
    e = INST.energy_axis_eV(NCH)
    truth = painting_truth(ny, nx)
    scale = 0.25  # ~1,000 counts per spectrum, like a fast scan
    with h5py.File(path, "w") as f:
        d = f.create_dataset(
            "scan/counts",
            shape=(ny, nx, NCH),
            dtype=np.uint16,
            chunks=(max(1, min(slab, ny)), nx, NCH),
        )
        f.create_dataset("scan/energy_eV", data=e)
        for y in range(0, ny, slab):
            part = {k: v[y : y + slab] * scale for k, v in truth.items()}
            d[y : y + slab] = synthesise_cube(e, part, INST, background_counts=150.0, seed=y)
    return time.perf_counter() - t0


def run_one(path: Path, workers: int, out: Path | None = None) -> dict:
    t0 = time.perf_counter()
    cube = open_cube(path, instrument=INST)
    with Runner(None, n_workers=workers, memory_limit="900MB") as runner:
        t_cluster = time.perf_counter() - t0
        res = run_maps(cube, runner, instrument=INST)
    t_write = 0.0
    if out is not None:
        t1 = time.perf_counter()
        write_products(res, out)
        t_write = time.perf_counter() - t1
    total = time.perf_counter() - t0
    return {
        "total": total,
        "cluster_start": t_cluster,
        **res.timings_s,
        "write": t_write,
        "families": res.families,
        "n": cube.shape[0] * cube.shape[1],
    }


def stage_a(tmp: Path) -> None:
    print("\nA. 100×100 px × 2,048 channels, end to end (LocalCluster, 2 workers)")
    path = tmp / "a.h5"
    t_synth = write_cube(path, 100, 100)
    r = run_one(path, 2, tmp / "a_out")
    print(f"   synthesise + write cube   {t_synth:7.2f} s (not part of mapping)")
    for k in ("cluster_start", "sum_pass", "identify", "screen", "fit_pass", "write"):
        print(f"   {k:<25} {r[k]:7.2f} s")
    print(f"   whole map run             {r['total']:7.2f} s  (target ≤ 20 s on 2 cores)")
    print(f"   families mapped           {', '.join(r['families'])}")
    # Baseline: one scipy NNLS per pixel on the same templates.
    from scipy.optimize import nnls

    from workbench.maps.fit import FitModel
    from workbench.maps.templates import build_templates

    with h5py.File(path) as f:
        Y = f["scan/counts"][:5].reshape(-1, NCH).astype(float)  # 500 pixels
    e = INST.energy_axis_eV(NCH)
    tpl = build_templates(e, r["families"], INST)
    model = FitModel.from_mean_spectrum(tpl, Y.mean(axis=0))
    sw = np.sqrt(model.weights)
    Aw = tpl.matrix * sw[:, None]
    t0 = time.perf_counter()
    for y in Y:
        nnls(Aw, y * sw)
    t_loop = time.perf_counter() - t0
    t0 = time.perf_counter()
    model.solve(Y.T)
    t_batch = time.perf_counter() - t0
    print(
        f"   fit of 500 px: scipy nnls loop {t_loop:.3f} s, batched {t_batch:.3f} s "
        f"(×{t_loop / t_batch:.1f}); loop for 10,000 px ≈ {t_loop * 20:.1f} s"
    )


def stage_b(tmp: Path, n: int) -> None:
    gb = n * n * NCH * 2 / 1e9
    print(f"\nB. out of core: {n}×{n} × 2,048 uint16 on disk ({gb:.2f} GB)")
    path = tmp / "b.h5"
    t_synth = write_cube(path, n, n)
    print(f"   synthesise + write cube   {t_synth:7.1f} s")
    for workers in (1, 2):
        with PeakRSS() as mem:
            r = run_one(path, workers)
        rate = r["n"] / (r["sum_pass"] + r["fit_pass"])
        print(
            f"   {workers} worker(s): total {r['total']:6.1f} s (sum pass {r['sum_pass']:.1f}, "
            f"fit pass {r['fit_pass']:.1f}), {rate:,.0f} spectra/s over both passes, "
            f"{r['n'] / r['fit_pass']:,.0f} spectra/s fit, peak RSS {mem.peak / 1e9:.2f} GB"
        )
    if n < 1000:
        print(
            f"   1000×1000 extrapolated (×{1e6 / (n * n):.1f} pixels, linear in pixels): "
            "see the rate above; peak memory follows chunk size, not cube size"
        )


def stage_c(tmp: Path, n_files: int = 500) -> None:
    print(f"\nC. batch of {n_files} single spectra: 2 workers vs a sequential loop")
    from workbench.maps.batch import run_batch
    from workbench.maps.pipeline import spectrum_csv
    from workbench.matching import analyse_input

    d = tmp / "spectra"
    d.mkdir()
    e = INST.energy_axis_eV(NCH)
    truth = painting_truth(25, 20)
    cube = synthesise_cube(e, {k: v * 4 for k, v in truth.items()}, INST, background_counts=600.0)
    for i in range(n_files):
        y, x = divmod(i, 20)
        (d / f"s{i:03d}.csv").write_bytes(spectrum_csv(e, cube[y, x], f"pixel {y},{x} INVENTED"))
    files = sorted(d.iterdir())
    analyse_input(files[0], name=files[0].name)  # warm the reference index, as workers do
    t0, c0 = time.perf_counter(), time.process_time()
    for f in files:
        analyse_input(f, name=f.name)
    t_seq, c_seq = time.perf_counter() - t0, time.process_time() - c0
    t0 = time.perf_counter()
    with Runner(None, n_workers=2) as runner:
        t_start = time.perf_counter() - t0
        run_batch([files[0]], runner, tmp / "warm")  # each worker builds its index once
        cpu0 = runner.client.run(time.process_time)
        t1 = time.perf_counter()
        run_batch([d], runner, tmp / "batch_out")
        t_par = time.perf_counter() - t1
        cpu1 = runner.client.run(time.process_time)
    c_par = sum(cpu1[k] - cpu0[k] for k in cpu1)
    print(
        f"   sequential loop           {t_seq:7.1f} s wall ({n_files / t_seq:.1f} spectra/s), "
        f"CPU {c_seq / n_files * 1000:.0f} ms/spectrum"
    )
    print(
        f"   batch, 2 workers          {t_par:7.1f} s wall ({n_files / t_par:.1f} spectra/s), "
        f"CPU {c_par / n_files * 1000:.0f} ms/spectrum on workers; ×{t_seq / t_par:.2f} wall "
        f"(cluster start {t_start:.1f} s and warm-up not counted)"
    )


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--full", action="store_true", help="stage B on 1000×1000 (~4 GB on disk)")
    ap.add_argument("--size", type=int, default=300, help="stage B side (default 300)")
    ap.add_argument("--skip", default="", help="stages to skip, e.g. 'bc'")
    ap.add_argument("--tmp", type=Path, help="scratch directory (default: system temp)")
    args = ap.parse_args()
    print(
        f"cores {os.cpu_count()}, memory {psutil.virtual_memory().total / 1e9:.1f} GB, "
        f"load average {os.getloadavg()[0]:.1f} (other jobs share these cores)"
    )
    with tempfile.TemporaryDirectory(dir=args.tmp) as t:
        tmp = Path(t)
        if "a" not in args.skip:
            stage_a(tmp)
        if "b" not in args.skip:
            stage_b(tmp, 1000 if args.full else args.size)
        if "c" not in args.skip:
            stage_c(tmp)
    print(f"\nload average at the end {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()
