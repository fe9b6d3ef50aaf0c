"""Archive-scale benchmark: a survey over a synthetic local mirror in the archive layout.

Run ``python benchmarks/bench_archive.py`` (``--quick`` for a short run, ``--help``
for the options). It builds, in a temporary folder (never in the repository), a
mirror of ``--files`` structure files (default 5,000) in the archive layout: two-
character folders named by the middle of the entry id, holding ``<id>.cif.gz``
(``--layout mmcif``, default) or ``pdb<id>.ent.gz`` (``--layout pdb``). The files
are made from the real entries of shared/structures, each written twice with gemmi:
as deposited, and with every non-polymer residue removed (no cofactor, no ligand,
no water: most archive entries hold no redox metal). ``--with-cofactors`` of the
files (default 10 %) are full entries; the rest are stripped ones. The files are
hard links to these few prototypes, under distinct names: the operating system
caches them, so the timing is of fescan, not of the disk.

It then surveys the mirror (``fescan.surveys.run.survey``, each run in a fresh
interpreter, the prefilter on) with 1 and 2 worker processes and prints, in one
run: files per second, the share set aside by the prefilter, peak resident memory
(parent, largest worker, parent + workers) for N/2 and N files, the ratio of
2 workers to 1, and the projected time for 220,000 entries on this machine. With
``--dask`` it also runs the same survey on Dask distributed: a scheduler and two
single-threaded worker processes started beside it (``LocalCluster``), reached by
address as an external scheduler would be.

Goals (from the issue; what is reached is printed, nothing is tuned to pass): the
projection under one hour; 2 workers >= 1.8x one; peak memory flat in the number
of files.
"""

from __future__ import annotations

import argparse
import gzip
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import gemmi

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

from fescan.surveys.run import find_structure_files  # noqa: E402

DEFAULT_SHARED = Path(os.environ.get("FESCAN_SHARED_STRUCTURES") or REPO.parent / "shared" / "structures")
ARCHIVE_ENTRIES = 220_000
#: The child survey imports fescan (the repository) and memory_sampler (this folder).
CHILD_PATH = os.pathsep.join([str(REPO), str(Path(__file__).resolve().parent)])

_CHILD = r"""
import json, sys, time

from memory_sampler import PeakMemory

if __name__ == "__main__":
    from fescan.surveys.run import read_file_list, survey

    args = json.loads(sys.argv[1])
    inputs = read_file_list(args["list"])
    cluster = None
    kwargs = {}
    if args["engine"] == "dask":
        from distributed import LocalCluster

        cluster = LocalCluster(n_workers=args["workers"], threads_per_worker=1, processes=True,
                               host="127.0.0.1", dashboard_address=None)
        kwargs = {"engine": "dask", "scheduler": cluster.scheduler_address}
    with PeakMemory(interval=0.1) as mem:
        t = time.perf_counter()
        s = survey(inputs, args["out"], workers=args["workers"], quiet=True, **kwargs)
        wall = time.perf_counter() - t
    if cluster is not None:
        cluster.close()
    print(json.dumps({"wall": wall, "files": s.n_ok + s.n_failed + s.n_no_candidate, "ok": s.n_ok,
                      "failed": s.n_failed, "skipped": s.n_no_candidate, **mem.as_dict()}))
"""


def _entry_id(k: int) -> str:
    """A four-character id (digit + three base-36 characters), distinct for each k < 46,656."""
    digits = "0123456789abcdefghijklmnopqrstuvwxyz"
    a, b = divmod(k, 36 * 36)
    b, c = divmod(b, 36)
    return f"{1 + a // 36}{digits[a % 36]}{digits[b]}{digits[c]}"


def prototypes(structures: Path, dest: Path, layout: str) -> tuple[list[Path], list[Path]]:
    """Each real entry written as deposited and stripped of every non-polymer residue (gz)."""
    full, stripped = [], []
    dest.mkdir(parents=True, exist_ok=True)
    for src in find_structure_files([structures]):
        st = gemmi.read_structure(src)
        st.setup_entities()
        name = Path(src).name.split(".")[0].lower()
        for kind, out in (("full", full), ("stripped", stripped)):
            if kind == "stripped":
                st.remove_ligands_and_waters()
                st.connections.clear()
            text = (st.make_mmcif_document().as_string() if layout == "mmcif"
                    else st.make_pdb_string(gemmi.PdbWriteOptions(minimal=True)))
            path = dest / f"{name}_{kind}.gz"
            path.write_bytes(gzip.compress(text.encode(), compresslevel=6))
            out.append(path)
    return full, stripped


def build_mirror(full: list[Path], stripped: list[Path], root: Path, n: int, share: float, layout: str) -> Path:
    """``n`` hard links in the archive layout; every round(1/share)-th one is a full entry. Return the list file."""
    step = max(1, round(1 / share)) if share > 0 else n + 1
    paths = []
    for k in range(n):
        ident = _entry_id(k)
        src = full[k // step % len(full)] if k % step == 0 else stripped[k % len(stripped)]
        folder = root / ident[1:3]
        folder.mkdir(parents=True, exist_ok=True)
        dst = folder / (f"{ident}.cif.gz" if layout == "mmcif" else f"pdb{ident}.ent.gz")
        try:
            os.link(src, dst)
        except OSError:
            shutil.copyfile(src, dst)
        paths.append(str(dst))
    listing = root.parent / f"{root.name}.txt"
    listing.write_text("\n".join(paths) + "\n", encoding="utf-8")
    return listing


def run(listing: Path, out: Path, workers: int, engine: str = "processes") -> dict:
    shutil.rmtree(out, ignore_errors=True)
    arg = json.dumps({"list": str(listing), "out": str(out), "workers": workers, "engine": engine})
    done = subprocess.run([sys.executable, "-c", _CHILD, arg], capture_output=True, text=True, cwd=REPO,
                          env={**os.environ, "PYTHONPATH": CHILD_PATH})
    if done.returncode != 0:
        raise SystemExit(f"bench_archive: the survey failed:\n{done.stderr[-3000:]}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def _load() -> str:
    try:
        return " ".join(f"{x:.1f}" for x in os.getloadavg())
    except OSError:
        return "n/a"


def _line(label: str, r: dict) -> str:
    rate = r["files"] / r["wall"]
    return (f"  {label:<22}{r['wall']:8.1f} s {rate:8.1f} files/s  skipped {r['skipped'] / r['files']:6.1%}  "
            f"ok {r['ok']}, failed {r['failed']}  projected {ARCHIVE_ENTRIES / rate / 3600:5.2f} h for "
            f"{ARCHIVE_ENTRIES:,} entries")


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--structures", type=Path, default=DEFAULT_SHARED, help="folder of real structure files")
    p.add_argument("--files", type=int, default=5000, help="files in the synthetic mirror (default 5000)")
    p.add_argument("--with-cofactors", type=float, default=0.10,
                   help="share of full entries (with their cofactors); the rest are stripped (default 0.10)")
    p.add_argument("--layout", choices=("mmcif", "pdb"), default="mmcif",
                   help="<id>.cif.gz (default) or pdb<id>.ent.gz in two-character folders")
    p.add_argument("--quick", action="store_true", help="400 files, no N/2 memory run")
    p.add_argument("--dask", action="store_true", help="also run on Dask (scheduler + 2 worker processes)")
    p.add_argument("--json", type=Path, help="also write every number as JSON")
    a = p.parse_args(argv)
    if not a.structures.is_dir():
        sys.stderr.write(f"bench_archive: {a.structures} is not a folder (use --structures)\n")
        return 2
    n = 400 if a.quick else a.files
    tmp = Path(tempfile.mkdtemp(prefix="fescan-archive-"))
    results: dict[str, dict] = {}
    try:
        t = time.perf_counter()
        full, stripped = prototypes(a.structures, tmp / "prototypes", a.layout)
        listing = build_mirror(full, stripped, tmp / "mirror", n, a.with_cofactors, a.layout)
        found = find_structure_files([tmp / "mirror"])
        print(f"mirror: {n} files ({a.layout}, {a.with_cofactors:.0%} with cofactors) from {len(full)} entries, "
              f"built in {time.perf_counter() - t:.1f} s; found by folder search: {len(found)}", flush=True)
        print(f"load average before: {_load()}; {os.cpu_count()} cores", flush=True)
        results["1 worker"] = run(listing, tmp / "out1", 1)
        print(_line("processes, 1 worker", results["1 worker"]), flush=True)
        results["2 workers"] = run(listing, tmp / "out2", 2)
        print(_line("processes, 2 workers", results["2 workers"]), flush=True)
        if a.dask:
            results["dask 2 workers"] = run(listing, tmp / "outd", 2, engine="dask")
            print(_line("dask, 2 workers", results["dask 2 workers"]), flush=True)
        speed = results["1 worker"]["wall"] / results["2 workers"]["wall"]
        hours = ARCHIVE_ENTRIES / (results["2 workers"]["files"] / results["2 workers"]["wall"]) / 3600
        print(f"  2 workers / 1 worker: {speed:.2f}x (goal >= 1.8x: {'reached' if speed >= 1.8 else 'NOT reached'})")
        print(f"  projected whole archive with 2 workers: {hours:.2f} h (goal < 1 h: "
              f"{'reached' if hours < 1 else 'NOT reached'})")
        if not a.quick:
            half = tmp / "half.txt"
            half.write_text("".join(listing.read_text().splitlines(keepends=True)[: n // 2]), encoding="utf-8")
            results["2 workers, N/2"] = run(half, tmp / "outh", 2)
        print("peak resident memory (MiB), 2 workers:")
        for label in ("2 workers, N/2", "2 workers"):
            if label in results:
                r = results[label]
                print(f"  {r['files']:>6} files: parent {r['parent_kib'] / 1024:7.1f}, largest worker "
                      f"{r['worker_kib'] / 1024:7.1f}, parent + workers {r['total_kib'] / 1024:7.1f}")
        if "2 workers, N/2" in results:
            growth = results["2 workers"]["total_kib"] / max(1, results["2 workers, N/2"]["total_kib"])
            print(f"  peak N / (N/2): {growth:.2f} (flat if close to 1: {'reached' if growth < 1.25 else 'NOT reached'})")
        print(f"load average after: {_load()}")
        if a.json:
            a.json.write_text(json.dumps(results, indent=1) + "\n", encoding="utf-8")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
