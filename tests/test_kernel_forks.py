"""Stage kernels forked from the build's fork server (calcs/kernel_forks.py).

What is checked: a forked kernel is an ordinary Jupyter kernel to papermill (it executes a
notebook and its outputs are recorded), it runs in the working folder and with the
environment the kernel manager gave it, in a session of its own, at the niceness asked for, and
finds the preloaded modules already imported; nothing is left running once the kernels and the
server have ended; a server that has gone is reported in one line. That a whole build gives the
same numbers with forked and with ordinary kernels is checked in test_cache.py.
"""

from __future__ import annotations

import json
import os
import time
from pathlib import Path

import nbformat
import pytest

from calcs import kernel_forks

pytestmark = pytest.mark.skipif(not kernel_forks.enabled() and os.environ.get(kernel_forks.ENV) != "0",
                                reason="builds fork kernels on Linux only")

PROBE = """
import json, os, sys
print(json.dumps({"cwd": os.getcwd(), "marker": os.environ.get("FREERUN_TEST_MARKER"), "pid": os.getpid(),
                  "sid": os.getsid(0), "nice": os.nice(0), "preloaded": "calcs.batch" in sys.modules,
                  "argv0": sys.argv[0]}))
"""


def _notebook(tmp_path: Path) -> Path:
    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_code_cell(PROBE)]
    nb.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3", "language": "python"}
    path = tmp_path / "probe.ipynb"
    nbformat.write(nb, str(path))
    return path


def _run(server, tmp_path: Path, workdir: Path, nice: int = 0) -> dict:
    import papermill

    out = tmp_path / f"probe-out-{nice}.ipynb"
    papermill.execute_notebook(str(_notebook(tmp_path)), str(out), kernel_name="python3", progress_bar=False,
                               resources={"metadata": {"path": str(workdir)}}, shutdown_kernel="immediate",
                               kernel_manager_class=kernel_forks.kernel_manager_class(server, nice))
    cell = nbformat.read(str(out), as_version=4).cells[0]
    return json.loads("".join(o["text"] for o in cell.outputs if o.get("name") == "stdout"))


def _gone(pid: int, seconds: float = 10.0) -> bool:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        if not kernel_forks._alive(pid):
            return True
        time.sleep(0.05)
    return False


def test_a_forked_kernel_runs_a_notebook_where_and_as_asked(tmp_path, monkeypatch):
    monkeypatch.setenv("FREERUN_TEST_MARKER", "set-by-the-test")  # the kernel manager passes os.environ on
    workdir = tmp_path / "build"
    workdir.mkdir()
    server = kernel_forks.ForkServer()
    try:
        first = _run(server, tmp_path, workdir)
        low = _run(server, tmp_path, workdir, nice=7)
    finally:
        server.close()
    assert Path(first["cwd"]).resolve() == workdir.resolve()
    assert first["marker"] == "set-by-the-test"
    assert first["sid"] == first["pid"]  # its own session: its shutdown signals its group only
    assert first["preloaded"]  # forked after the server's imports, not a new interpreter
    assert first["argv0"] == "ipykernel_launcher"
    assert first["pid"] != os.getpid() and low["pid"] != first["pid"]
    assert low["nice"] - first["nice"] == 7
    assert _gone(first["pid"]) and _gone(low["pid"])  # ended by papermill, reaped by the server
    assert server._process.poll() is not None  # the server ended with close()


def test_the_server_ends_when_the_build_closes_it_and_leaves_nothing(tmp_path):
    import psutil

    server = kernel_forks.ForkServer()
    pid = server._process.pid
    server.close()
    assert not psutil.pid_exists(pid) or psutil.Process(pid).status() == psutil.STATUS_ZOMBIE
    assert [p for p in psutil.Process().children(recursive=True) if p.status() != psutil.STATUS_ZOMBIE] == []


def test_a_server_that_has_gone_is_reported_in_one_line():
    server = kernel_forks.ForkServer()
    server._process.kill()
    server._process.wait()
    with pytest.raises(RuntimeError, match="fork server ended"):
        server.fork([], dict(os.environ), os.getcwd())
    server.close()


@pytest.mark.parametrize(("cmd", "expected"), [
    (["/venv/bin/python", "-Xfrozen_modules=off", "-m", "ipykernel_launcher", "-f", "k.json"], ["-f", "k.json"]),
    (["python", "-m", "ipykernel_launcher", "-f", "k.json", "--IPKernelApp.log_level=ERROR"],
     ["-f", "k.json", "--IPKernelApp.log_level=ERROR"]),
    (["python", "-m", "other_kernel", "-f", "k.json"], None),
    (["/usr/bin/R", "--slave", "-f", "k.json"], None),
])
def test_only_ipykernel_commands_are_forked(cmd, expected):
    assert kernel_forks._launcher_arguments(cmd) == expected


def test_forking_can_be_switched_off(monkeypatch):
    monkeypatch.setenv(kernel_forks.ENV, "0")
    assert not kernel_forks.enabled()
    monkeypatch.setenv(kernel_forks.ENV, "1")
    assert kernel_forks.enabled()
