"""One process that renders every stage's charts during a build.

The report's charts are Vega-Lite specifications rendered to PNG by vl-convert
(:mod:`calcs.charts`). vl-convert's first rendering in a process starts its JavaScript engine:
about 0.6 s of processor time, during which it holds the interpreter lock (the kernel's main
thread stands still; later renderings release it). Five stage kernels would each pay that. A
build therefore starts one **renderer** (:class:`ChartRenderer`) before its kernels; it starts
the engine once and renders the charts that the kernels send it, over a Unix socket whose path
the kernels find in the environment (:data:`ENV`). A template run on its own (Jupyter, nbval)
has no renderer and renders in its own process, as does a kernel that cannot reach the renderer;
the PNG bytes are the same either way (vl-convert, same version, same specification, then
:func:`opaque_png`).

Protocol, one connection per chart: the kernel sends the scale (8-byte float) and the
specification's length (4 bytes) and UTF-8 text; the renderer answers ``0`` + length + PNG, or
``1`` + length + the error message (raised in the kernel as :class:`ChartError`).

A build also gives the renderer a folder of charts already rendered (:class:`ChartCache`,
``<build parent>/.stage-cache/charts/``, keyed by vl-convert's version, the code version, the
scale and the specification): a tariff rebuild re-runs the energy stage, but its monthly-energy
and energy-saving charts do not depend on prices, and come from there.

Run as ``python -m calcs.chart_renderer SOCKET [CACHE]`` by :class:`ChartRenderer` only; it ends
when the build closes its standard input (or the build process is gone).
"""

from __future__ import annotations

import hashlib
import os
import shutil
import socket
import struct
import subprocess
import sys
import tempfile
import threading
import time

#: Environment variable with the socket path of the build's renderer (set for the stage kernels).
ENV = "FREERUN_CHART_RENDERER"
#: How long a kernel waits for the renderer's socket to appear before it renders on its own [s].
CONNECT_WAIT = 3.0

_HEAD = struct.Struct("<dI")  # scale, length of the specification
_REPLY = struct.Struct("<BI")  # status (0 PNG, 1 error), length of the payload

#: A one-point chart: rendering it starts vl-convert's engine.
WARM_UP_SPEC = '{"data": {"values": [{"x": 1}]}, "mark": "point", "encoding": {"x": {"field": "x", "type": "quantitative"}}}'


class ChartError(RuntimeError):
    """The renderer could not render a specification (its message is vl-convert's)."""


class ChartRenderer:
    """The build's side of the renderer: starts it and ends it; ``address`` goes to :data:`ENV`."""

    def __init__(self, cache: str | os.PathLike | None = None) -> None:
        """``cache``: a folder of rendered charts (:class:`ChartCache`) to take them from and keep them in."""
        self._folder = tempfile.mkdtemp(prefix="freerun-charts-")  # private (0700); a short path for the socket
        self.address = os.path.join(self._folder, "render.sock")
        self._process = subprocess.Popen([sys.executable, "-m", "calcs.chart_renderer", self.address,
                                          *([str(cache)] if cache is not None else [])],
                                         stdin=subprocess.PIPE, close_fds=True)

    def close(self) -> None:
        """End the renderer (idempotent) and remove its socket."""
        try:
            if self._process.stdin is not None and not self._process.stdin.closed:
                self._process.stdin.close()
            if self._process.poll() is None:
                self._process.terminate()  # at once, even while its engine is still starting
            self._process.wait()
        finally:
            shutil.rmtree(self._folder, ignore_errors=True)


def render(spec: str, scale: float = 2.0) -> bytes:
    """PNG bytes of a Vega-Lite specification (JSON text), rendered offline.

    By the build's renderer when this process was started by a build (:data:`ENV` set and the
    renderer reachable), otherwise here with vl-convert.

    Raises
    ------
    ChartError
        The renderer refused the specification.
    """
    address = os.environ.get(ENV, "")
    if address:
        try:
            return _ask(address, spec, scale)
        except OSError:
            pass  # no renderer to reach (it ended, or never started): render here
    return _png(spec, scale)


def start_engine() -> None:
    """Render :data:`WARM_UP_SPEC`: the first rendering in a process starts vl-convert's engine."""
    import vl_convert

    vl_convert.vegalite_to_png(WARM_UP_SPEC, scale=1)


def _png(spec: str, scale: float) -> bytes:
    """vl-convert's PNG of ``spec`` without its alpha channel (see :func:`opaque_png`)."""
    import vl_convert

    return opaque_png(vl_convert.vegalite_to_png(spec, scale=scale))


def opaque_png(png: bytes) -> bytes:
    """The PNG laid on white and stored as RGB.

    vl-convert writes RGBA even for a chart on a white background; WeasyPrint then splits
    every image into colour and a separate alpha mask and compresses both again, which was 40 %
    of writing report.pdf (measured: 3.4–3.6 s with the RGBA charts, 1.9–2.0 s with RGB ones,
    same layout). A pixel that is opaque keeps its colour exactly.
    """
    import io

    from PIL import Image

    image = Image.open(io.BytesIO(png))
    if image.mode == "RGB":
        return png
    image = image.convert("RGBA")
    flat = Image.new("RGBA", image.size, (255, 255, 255, 255))
    flat.alpha_composite(image)
    out = io.BytesIO()
    flat.convert("RGB").save(out, format="PNG")
    return out.getvalue()


#: Rendered charts a cache folder keeps (the least recently used go first).
CHART_ENTRIES = 256


class ChartCache:
    """Rendered charts by the SHA-256 of what made them: vl-convert's version, the code version
    (:func:`calcs.cache.code_version`: :func:`opaque_png` among it), the scale and the specification.

    Entries ``<key>.chart`` (:class:`calcs.cache.DigestedFiles`: the PNG's digest, then the PNG;
    a damaged one is rendered again). The same specification gives the same PNG, so a chart from
    the cache is the chart that would be rendered now.
    """

    def __init__(self, folder: str | os.PathLike) -> None:
        import vl_convert

        from .cache import DigestedFiles, code_version

        self._files = DigestedFiles(folder, ".chart", CHART_ENTRIES)
        self._salt = f"{vl_convert.__version__}\0{code_version()}"

    def key(self, spec: str, scale: float) -> str:
        return hashlib.sha256(f"{self._salt}\0{float(scale)!r}\0{spec}".encode()).hexdigest()

    def get(self, key: str) -> bytes | None:
        return self._files.get(key)

    def put(self, key: str, png: bytes) -> None:
        self._files.put(key, png)


def _ask(address: str, spec: str, scale: float) -> bytes:
    deadline = time.monotonic() + CONNECT_WAIT
    while True:
        conn = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
        try:
            conn.connect(address)
            break
        except (FileNotFoundError, ConnectionRefusedError):
            conn.close()
            if time.monotonic() > deadline:
                raise
            time.sleep(0.02)  # the renderer is still starting
    with conn:
        body = spec.encode("utf-8")
        conn.sendall(_HEAD.pack(float(scale), len(body)) + body)
        status, length = _REPLY.unpack(_read(conn, _REPLY.size))
        payload = _read(conn, length)
    if status != 0:
        raise ChartError(payload.decode("utf-8", "replace"))
    return payload


def _read(conn: socket.socket, n: int) -> bytes:
    chunks, left = [], n
    while left:
        chunk = conn.recv(min(left, 1 << 20))
        if not chunk:
            msg = "the chart renderer closed the connection"
            raise ConnectionError(msg)
        chunks.append(chunk)
        left -= len(chunk)
    return b"".join(chunks)


# ----------------------------------------------------------------------------- renderer side


def _handle(conn: socket.socket, cache: ChartCache | None = None) -> None:
    with conn:
        try:
            scale, length = _HEAD.unpack(_read(conn, _HEAD.size))
            spec = _read(conn, length).decode("utf-8")
        except (OSError, UnicodeDecodeError):
            return
        key = cache.key(spec, scale) if cache is not None else ""
        try:
            status, payload = 0, cache.get(key) if cache is not None else None
            if payload is None:
                payload = _png(spec, scale)
                if cache is not None:
                    cache.put(key, payload)
        except Exception as exc:  # noqa: BLE001 - sent back to the kernel, which raises it
            status, payload = 1, f"{type(exc).__name__}: {exc}".encode()
        try:
            conn.sendall(_REPLY.pack(status, len(payload)) + payload)
        except OSError:
            pass


def _serve(address: str, cache_folder: str | None = None) -> None:
    def end_with_the_build() -> None:
        sys.stdin.buffer.read()  # returns when the build closes our input or is gone
        shutil.rmtree(os.path.dirname(address), ignore_errors=True)  # the build's private folder
        os._exit(0)

    listener = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
    listener.bind(address)
    listener.listen(64)  # kernels may connect now; they wait while the engine starts
    # after the bind: a build already gone would otherwise have its folder removed while the
    # socket is being made in it, and the folder would stay
    threading.Thread(target=end_with_the_build, daemon=True).start()
    start_engine()
    cache = ChartCache(cache_folder) if cache_folder else None
    # one chart at a time: vl-convert renders one at a time in a process anyway (measured: six
    # renderings took as long from two or three threads as one after another)
    while True:
        conn, _ = listener.accept()
        _handle(conn, cache)


if __name__ == "__main__":
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)  # Ctrl-C reaches the build, which then ends us
    _serve(sys.argv[1], sys.argv[2] if len(sys.argv) > 2 else None)
