"""Native FCI against pyscf's ``direct_spin1`` on N2 / cc-pVDZ active spaces.

Builds RHF for N2 at 1.098 Å, then CASCI-style active-space integrals for
CAS(8,8), CAS(10,10) and CAS(12,12) (``get_h1eff`` / ``get_h2eff`` restored to
dense chemist arrays). Each solver runs the ground state in its own
subprocess; peak memory is ``ru_maxrss`` at the end minus ``ru_maxrss`` after
imports and loading the integrals (the extra peak the solve itself caused).

    python bench/fci.py              # CAS(8,8), (10,10), (12,12)
    python bench/fci.py --quick      # CAS(8,8) only
    python bench/fci.py --repeat 3   # best of three runs per solver (shared machines are noisy)
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

ROOT = Path(__file__).resolve().parents[1]
GIB = 2**30


def _peak_mib() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def build_integrals(sizes, folder: Path) -> None:
    """Write h1, eri (chemist, dense) and ecore of each CAS(n, n) of N2 to ``folder``."""
    import numpy as np
    from pyscf import ao2mo, gto, mcscf, scf

    mol = gto.M(atom="N 0 0 0; N 0 0 1.098", basis="cc-pvdz", unit="angstrom", verbose=0)
    mf = scf.RHF(mol).run()
    for n in sizes:
        cas = mcscf.CASCI(mf, n, n)
        h1, ecore = cas.get_h1eff()
        eri = ao2mo.restore(1, cas.get_h2eff(), n)
        np.savez(folder / f"cas{n}.npz", h1=h1, eri=eri, ecore=ecore, n=n)


def worker(engine: str, path: str) -> None:
    """Solve one ground state and print a JSON line (run in a fresh process)."""
    import numpy as np

    sys.path.insert(0, str(ROOT))
    from pyscf import fci

    from integrity.solver import solve_arrays

    data = np.load(path)
    h1, eri, ecore, n = data["h1"], data["eri"], float(data["ecore"]), int(data["n"])
    baseline = _peak_mib()
    start = time.perf_counter()
    if engine == "native":
        result = solve_arrays("restricted", h1, eri, ecore, n_alpha=n // 2, n_beta=n // 2)
        energy = result.roots[0].energy
        extra = {"iterations": result.iterations, "estimate_mib": result.memory_estimate / 2**20}
    else:
        energy, _ = fci.direct_spin1.FCI().kernel(h1, eri, n, (n // 2, n // 2), ecore=ecore)
        extra = {}
    elapsed = time.perf_counter() - start
    print(json.dumps({"time": elapsed, "energy": float(energy), "peak_mib": _peak_mib() - baseline, **extra}))


def run(engine: str, path: Path, repeat: int) -> dict:
    """Best wall time of ``repeat`` fresh processes; peak memory of that same run."""
    runs = []
    for _ in range(repeat):
        out = subprocess.run(
            [sys.executable, __file__, "--worker", engine, str(path)],
            check=True,
            capture_output=True,
            text=True,
            env=dict(os.environ),
        )
        runs.append(json.loads(out.stdout.strip().splitlines()[-1]))
    return min(runs, key=lambda r: r["time"])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="CAS(8,8) only")
    parser.add_argument("--repeat", type=int, default=1, help="runs per solver; best is shown")
    parser.add_argument("--worker", nargs=2, metavar=("ENGINE", "PATH"), help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.worker:
        worker(*args.worker)
        return
    sizes = [8] if args.quick else [8, 10, 12]
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        build_integrals(sizes, folder)
        print(
            f"N2 cc-pVDZ, 1.098 Å, RHF + CAS(n,n) ground state; wall time in s (best of "
            f"{args.repeat}); peak = extra ru_maxrss of the solve in MiB; estimate = native "
            "memory estimate in MiB"
        )
        header = (
            f"{'space':>11} {'native s':>9} {'pyscf s':>8} {'ratio':>6} "
            f"{'E native':>19} {'E pyscf':>19} {'dE':>9} {'peak nat':>9} "
            f"{'peak pys':>9} {'mem ratio':>9} {'iter':>5} {'estimate':>9}"
        )
        print(header)
        for n in sizes:
            path = folder / f"cas{n}.npz"
            native = run("native", path, args.repeat)
            reference = run("pyscf", path, args.repeat)
            print(
                f"CAS({n},{n}){'':>3} {native['time']:9.2f} {reference['time']:8.2f} "
                f"{native['time'] / reference['time']:6.2f} {native['energy']:19.10f} "
                f"{reference['energy']:19.10f} {native['energy'] - reference['energy']:9.1e} "
                f"{native['peak_mib']:9.1f} {reference['peak_mib']:9.1f} "
                f"{native['peak_mib'] / max(reference['peak_mib'], 1e-3):9.2f} "
                f"{native['iterations']:5d} {native['estimate_mib']:9.1f}",
                flush=True,
            )
    sys.path.insert(0, str(ROOT))
    from integrity.solver import estimate_memory

    need = estimate_memory("restricted", 14, n_alpha=7, n_beta=7)
    verdict = "fits" if need <= 24 * GIB else "does not fit"
    print(f"native memory estimate for CAS(14,14): {need / GIB:.2f} GiB ({verdict} in 24 GiB)")


if __name__ == "__main__":
    main()
