"""Whole-process figures for bench/run.py --process: each run is a fresh process timed from
outside, as a user meets it (`permq run FILE` from a shell), beside scipy in its own process
and the reference C loop (../shared/reference/mc_limit.c, built into a temporary folder; not
part of permq), on the same data in the same run.

    python bench/run.py --process [--python PATH]     # PATH: an interpreter with permq installed

Processes start in a temporary folder, so an installed permq is measured, not the checkout.
"""
from __future__ import annotations

import os
import pty
import select
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
# beside the checkout (main, CI) or two levels up (a worktree in wt/NAME)
C_SOURCE = next((p for p in (ROOT.parent / "shared" / "reference" / "mc_limit.c",
                             ROOT.parents[1] / "shared" / "reference" / "mc_limit.c") if p.exists()),
                ROOT.parent / "shared" / "reference" / "mc_limit.c")
TRIVIAL = "compare [1.2, 3.4, 2.2, 5.1] vs [4.1, 5.0, 3.3, 6.2]"
REPEAT = 5


def lst(a) -> str:
    return "[" + ", ".join(f"{v:g}" for v in a) + "]"


class Runner:
    """Fresh processes of one interpreter, timed from outside (best of a few: the machine is shared)."""

    def __init__(self, python: str, folder: Path):
        self.python = python
        self.folder = folder
        script = Path(python).parent / "permq"
        self.permq = [str(script)] if script.exists() else [python, "-m", "permq.frontends.cli"]
        self.env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}

    def best(self, cmd, repeat=REPEAT) -> float:
        """Best wall time of `repeat` runs; the processor time of the same runs (user + system,
        children included) goes to self.cpu, the figure a busy machine disturbs least."""
        times, cpus = [], []
        for _ in range(repeat):
            with tempfile.TemporaryFile() as err:
                t = time.perf_counter()
                proc = subprocess.Popen(cmd, cwd=self.folder, env=self.env,
                                        stdout=subprocess.DEVNULL, stderr=err)
                _, status, usage = os.wait4(proc.pid, 0)
                times.append(time.perf_counter() - t)
                cpus.append(usage.ru_utime + usage.ru_stime)
                proc.returncode = os.waitstatus_to_exitcode(status)
                if proc.returncode != 0:
                    err.seek(0)
                    raise SystemExit(f"benchmark process failed: {' '.join(cmd)}\n"
                                     f"{err.read().decode()[-2000:]}")
        self.cpu = min(cpus)
        return min(times)

    def query(self, text: str, repeat=REPEAT) -> float:
        path = self.folder / f"q{abs(hash(text))}.pq"
        path.write_text(text + "\n")
        return self.best(self.permq + ["run", str(path)], repeat)

    def script(self, code: str, repeat=REPEAT) -> float:
        return self.best([self.python, "-c", code], repeat)

    def output(self, code: str) -> str:
        return subprocess.run([self.python, "-c", code], cwd=self.folder, env=self.env,
                              capture_output=True, text=True, check=True).stdout

    def prompt(self, repeat=REPEAT) -> float:
        """Seconds until the shell's prompt is on the screen (in a pseudo-terminal); the
        processor time of the whole session (start, prompt, `quit`) goes to self.cpu."""
        times, cpus = [], []
        for _ in range(repeat):
            t0 = time.perf_counter()
            pid, fd = pty.fork()
            if pid == 0:
                os.chdir(self.folder)
                os.execvpe(self.permq[0], self.permq + ["shell"], self.env)
            seen, found = b"", None
            while True:
                ready, _, _ = select.select([fd], [], [], 30)
                if not ready:
                    break
                try:
                    chunk = os.read(fd, 4096)
                except OSError:
                    break
                if not chunk:
                    break
                seen += chunk
                if found is None and b"permq> " in seen:
                    found = time.perf_counter() - t0
                    os.write(fd, b"quit\r")
            _, _, usage = os.wait4(pid, 0)
            cpus.append(usage.ru_utime + usage.ru_stime)
            os.close(fd)
            if found is None:
                raise SystemExit("the shell's prompt did not appear")
            times.append(found)
        self.cpu = min(cpus)
        return min(times)


def _scipy_code(x, y, draws):
    return ("import numpy as np\nfrom scipy import stats\n"
            f"x = np.array({x.tolist()!r}); y = np.array({y.tolist()!r})\n"
            "stats.permutation_test((x, y), lambda a, b, axis: a.mean(axis) - b.mean(axis), "
            f"vectorized=True, n_resamples={draws}, random_state=1)\n")


def _in_process_code(statement, repeat):
    """First and steady in-process time of a statement (after `import permq`)."""
    return ("import time, permq\n"
            f"s = {statement!r}\n"
            "t = time.perf_counter(); r = permq.run(s); first = time.perf_counter() - t\n"
            "assert hasattr(r[0], 'outcome'), r[0].message\n"
            "best = min((lambda t0: (permq.run(s), time.perf_counter() - t0)[1])"
            f"(time.perf_counter()) for _ in range({repeat}))\n"
            "print(first, best)")


def figures(python: str = sys.executable) -> list:
    """(what, permq seconds, beside, reference seconds, permq cpu, reference cpu) rows, all
    measured in this run (cpu None where it is not measured)."""
    rng = np.random.default_rng(20261202)
    a = np.round(rng.normal(20, 3, 200), 2)
    x, y = a[:100], a[100:]
    mc = f"compare {lst(x)} vs {lst(y)} sampled {{draws}} seed 1"
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        run = Runner(python, Path(tmp))
        run.query(TRIVIAL, 1)                                  # lark's cache, numba's cache
        run.query(mc.format(draws=100_000), 1)
        floor = run.script("import numpy, lark")
        floor_cpu = run.cpu
        rows.append(("start-up: a trivial statement, whole process", run.query(TRIVIAL),
                     "python importing numpy and lark", floor, run.cpu, floor_cpu))
        rows.append(("the shell's prompt on the screen (processor time: to the prompt and quit)",
                     run.prompt(3), "python importing numpy and lark", floor, run.cpu, floor_cpu))
        first, steady = map(float, run.output(_in_process_code(mc.format(draws=100_000), 3)).split())
        rows.append(("Monte Carlo 100,000 draws, 100 + 100: first call in a fresh process",
                     first, "steady (same process, warm)", steady, None, None))
        scipy_whole = run.script(_scipy_code(x, y, 100_000), 3)
        scipy_cpu = run.cpu
        rows.append(("Monte Carlo 100,000 draws, 100 + 100, whole process",
                     run.query(mc.format(draws=100_000)), "scipy permutation_test, whole process",
                     scipy_whole, run.cpu, scipy_cpu))
        if C_SOURCE.exists():
            exe, data = Path(tmp) / "mc_limit", Path(tmp) / "data.txt"
            subprocess.run(["cc", "-O2", "-o", str(exe), str(C_SOURCE), "-lm"], check=True)
            np.savetxt(data, a)
            obs = repr(float(x.mean() - y.mean()))
            c_whole = run.best([str(exe), str(data), "100", "1000000", obs])
            c_cpu = run.cpu
            rows.append(("Monte Carlo 1,000,000 draws, 100 + 100, whole process",
                         run.query(mc.format(draws=1_000_000)),
                         "reference C loop (one core), whole process", c_whole, run.cpu, c_cpu))
    return rows


def table(rows) -> str:
    out = ["| whole process | permq | beside | that | permq / that | processor time: permq, that |",
           "|---|---|---|---|---|---|"]
    for what, t, beside, ref, cpu, ref_cpu in rows:
        cpus = " / ".join("-" if c is None else f"{c:.3f} s" for c in (cpu, ref_cpu))
        out.append(f"| {what} | {t:.3f} s | {beside} | {ref:.3f} s | {t / ref:.2f} | {cpus} |")
    return "\n".join(out)


def whole_process_seconds(statement: str, tables=None, python: str = sys.executable,
                          repeat: int = 2) -> float:
    """A statement run by `permq run` in a fresh process (tables written to CSV and loaded)."""
    with tempfile.TemporaryDirectory() as tmp:
        run = Runner(python, Path(tmp))
        lines = []
        for name, frame in (tables or {}).items():
            path = Path(tmp) / f"{name}.csv"
            frame.to_csv(path, index=False)
            lines.append(f'load "{path}" as {name}')
        if tables:
            lines.append(f"use {next(iter(tables))}")
        return run.query("\n".join(lines + [statement]), repeat)
