"""Stage kernels forked from one process that has already imported what the templates import.

A build runs five stage notebooks, each in its own Jupyter kernel. Started the usual way, every
kernel is a new Python process that imports IPython, ipykernel, numpy, pandas, altair, pvlib and
:mod:`calcs` again: about 1.5 s of processor time each, five times over on a 2-core machine,
with the first stage's share at the head of the build's critical path. Here the build starts one
**fork server** instead: a process that imports all of that once (:data:`PRELOAD`) and then, for
each kernel the build asks for, forks a child that starts the ordinary ipykernel application
(``ipykernel_launcher -f <connection file>``) in the working folder and with the environment that
Jupyter would have given it. The notebook client, the messages, papermill and the executed
notebooks are exactly as before; only the kernel process is made by ``fork`` rather than
``exec``, so the templates' own imports find their modules already loaded.

The server holds no threads and opens no sockets to Jupyter (a process may only be forked
safely while it has one thread); each child starts its own session (``setsid``) so that a
kernel's shutdown, which signals its process group, ends that kernel and its own children (the
energy stage's worker processes), never the server or the other kernels. The server reaps its
children itself and ends when the build closes the connection to it (:meth:`ForkServer.close`)
or the build process is gone.

Except on Linux, or where ``FREERUN_FORK_KERNELS=0`` is set, builds start kernels the usual way
(:func:`enabled`); the numbers are the same either way (tested).

Run as ``python -m calcs.kernel_forks FD`` by :class:`ForkServer` only.
"""

from __future__ import annotations

import json
import os
import signal
import socket
import subprocess
import sys
import threading
from typing import Any

#: Modules imported by the server before it forks kernels: those the stage templates and the
#: kernel application import (a template's own ``import`` then finds them loaded).
PRELOAD = (
    "numpy", "pandas", "altair", "pvlib",
    "IPython", "ipykernel.kernelapp", "ipykernel.ipkernel", "ipykernel.zmqshell",
    "calcs.airflow", "calcs.batch", "calcs.charts", "calcs.climate", "calcs.comfort", "calcs.energy",
    "calcs.gains", "calcs.keyfigures", "calcs.kernels", "calcs.morph", "calcs.present", "calcs.solar",
    "calcs.stage", "calcs.sweep", "calcs.weather",
)
#: Environment switch: ``0`` makes builds start their kernels the usual way.
ENV = "FREERUN_FORK_KERNELS"


def enabled() -> bool:
    """Whether builds fork their stage kernels: on Linux, unless switched off by :data:`ENV`.

    Only Linux: macOS has ``fork`` but its system libraries are not safe to use in a forked
    child (why Python's own process pools spawn there).
    """
    return sys.platform.startswith("linux") and hasattr(os, "fork") and os.environ.get(ENV, "1").strip() != "0"


class ForkServer:
    """The build's side of a fork server: starts it, asks it for kernels, ends it.

    :meth:`fork` may be called from several threads at once (one per stage).
    """

    def __init__(self) -> None:
        ours, theirs = socket.socketpair()
        self._sock = ours
        self._file = ours.makefile("rwb", buffering=0)
        self._lock = threading.Lock()
        self._process = subprocess.Popen(
            [sys.executable, "-m", "calcs.kernel_forks", str(theirs.fileno())], pass_fds=(theirs.fileno(),),
            stdin=subprocess.DEVNULL, close_fds=True,
        )
        theirs.close()

    def fork(self, args: list[str], env: dict[str, str], cwd: str, nice: int = 0) -> int:
        """Fork one kernel, as ``python -m ipykernel_launcher ARGS`` would start it; returns its process id."""
        request = json.dumps({"args": list(args), "env": dict(env), "cwd": str(cwd), "nice": int(nice)})
        with self._lock:
            try:
                self._file.write(request.encode("utf-8") + b"\n")
                line = self._file.readline()
            except OSError:  # the server has gone (its end of the connection is closed)
                line = b""
        if not line:
            code = self._process.poll()
            msg = f"the kernel fork server ended (exit code {code}) before it could start a kernel"
            raise RuntimeError(msg)
        reply = json.loads(line)
        if "error" in reply:
            msg = f"the kernel fork server could not start a kernel: {reply['error']}"
            raise RuntimeError(msg)
        return int(reply["pid"])

    def close(self) -> None:
        """End the server (kernels it forked are not affected; the build has ended them by then)."""
        try:
            self._file.close()
            self._sock.close()
        finally:
            try:
                self._process.wait(timeout=5)
            except subprocess.TimeoutExpired:
                self._process.kill()
                self._process.wait()


class ForeignProcess:
    """The part of :class:`subprocess.Popen` that jupyter_client uses, for a kernel that is not our child.

    The fork server is the kernel's parent and reaps it; here "running" means the process id
    still names a live process (its exit code is not known: 0 once it has gone, or −9 when it
    was killed from here).
    """

    stdin = stdout = stderr = None

    def __init__(self, pid: int) -> None:
        self.pid = pid
        self.returncode: int | None = None

    def poll(self) -> int | None:
        if self.returncode is None and not _alive(self.pid):
            self.returncode = 0
        return self.returncode

    def wait(self, timeout: float | None = None) -> int:
        import time

        deadline = None if timeout is None else time.monotonic() + timeout
        while self.poll() is None:
            if deadline is not None and time.monotonic() > deadline:
                raise subprocess.TimeoutExpired(f"kernel {self.pid}", timeout)
            time.sleep(0.01)
        return self.returncode  # type: ignore[return-value]

    def send_signal(self, signum: int) -> None:
        os.kill(self.pid, signum)

    def kill(self) -> None:
        self.send_signal(signal.SIGKILL)
        self.returncode = -signal.SIGKILL

    def terminate(self) -> None:
        self.send_signal(signal.SIGTERM)


def _alive(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/stat", "rb") as f:
            state = f.read().rsplit(b")", 1)[1].split()[0]
        return state not in (b"Z", b"X")
    except FileNotFoundError:
        return False
    except OSError:  # no /proc: ask the process directly
        try:
            os.kill(pid, 0)
        except ProcessLookupError:
            return False
        return True


def kernel_manager_class(server: ForkServer, nice: int = 0):
    """A jupyter_client kernel manager class whose kernels ``server`` forks (``nice``: their niceness)."""
    from jupyter_client.provisioning import LocalProvisioner

    from .stage import kernel_manager_base

    class ForkedProvisioner(LocalProvisioner):
        async def launch_kernel(self, cmd: list[str], **kwargs: Any):
            args = _launcher_arguments(cmd)
            if args is None:  # another kind of kernel: start it the usual way
                return await super().launch_kernel(cmd, **kwargs)
            env = {**(kwargs.get("env") or os.environ), "JPY_PARENT_PID": str(os.getpid())}
            cwd = kwargs.get("cwd") or os.getcwd()
            # as jupyter_client's own launcher tells a kernel who started it (ipykernel read the
            # variable when the server imported it, so it goes on the command line too)
            args = [*args, f"--IPKernelApp.parent_handle={os.getpid()}"]
            self.process = ForeignProcess(server.fork(args, env, cwd, nice))
            self.pid = self.pgid = self.process.pid  # the kernel leads its own session
            self.cwd = cwd
            return self.connection_info

    class ForkedKernelManager(kernel_manager_base()):
        async def _async_pre_start_kernel(self, **kw: Any):
            import uuid

            self.kernel_id = self.kernel_id or kw.pop("kernel_id", str(uuid.uuid4()))
            if self.provisioner is None:
                self.provisioner = ForkedProvisioner(kernel_id=self.kernel_id or "", kernel_spec=self.kernel_spec,
                                                     parent=self)
            return await super()._async_pre_start_kernel(**kw)

    return ForkedKernelManager


def _launcher_arguments(cmd: list[str]) -> list[str] | None:
    """The arguments of ``ipykernel_launcher`` in a kernel command (``python [flags] -m ipykernel_launcher ARGS``).

    None for any other command. The interpreter's own flags (``-Xfrozen_modules=off``, which
    ipykernel's kernel spec adds for its debugger) do not apply to a forked kernel.
    """
    for i in range(1, len(cmd) - 1):
        if cmd[i] == "-m":
            return list(cmd[i + 2:]) if cmd[i + 1] == "ipykernel_launcher" else None
    return None


# ----------------------------------------------------------------------------- server side


def _serve(fd: int) -> None:
    sock = socket.socket(fileno=fd)
    stream = sock.makefile("rwb", buffering=0)
    for name in PRELOAD:
        __import__(name)
    signal.signal(signal.SIGCHLD, signal.SIG_IGN)  # the kernels are reaped as they end
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # Ctrl-C reaches the build, which ends the kernels and then us
    for line in stream:
        try:
            request = json.loads(line)
            pid = os.fork()
        except Exception as exc:  # noqa: BLE001 - reported to the build, which raises it
            stream.write(json.dumps({"error": f"{type(exc).__name__}: {exc}"}).encode() + b"\n")
            continue
        if pid == 0:
            stream.close()
            sock.close()
            _become_kernel(request)  # never returns
        stream.write(json.dumps({"pid": pid}).encode() + b"\n")
    os._exit(0)  # the build has closed the connection: nothing to tear down (and it would take a second)


def _become_kernel(request: dict[str, Any]) -> None:
    code = 1
    try:
        os.setsid()
        signal.signal(signal.SIGCHLD, signal.SIG_DFL)  # the kernel waits for its own children
        signal.signal(signal.SIGINT, signal.default_int_handler)
        if request["nice"]:
            os.nice(request["nice"])
        os.chdir(request["cwd"])
        os.environ.clear()
        os.environ.update(request["env"])
        sys.argv = ["ipykernel_launcher", *request["args"]]  # what ``python -m ipykernel_launcher ARGS`` sees
        from ipykernel import kernelapp

        kernelapp.launch_new_instance()
        code = 0
    except SystemExit as exc:
        code = exc.code if isinstance(exc.code, int) else 1
    except BaseException:  # noqa: BLE001 - the kernel's own error output, then its end
        import traceback

        traceback.print_exc()
    finally:
        os._exit(code)


if __name__ == "__main__":
    _serve(int(sys.argv[1]))
