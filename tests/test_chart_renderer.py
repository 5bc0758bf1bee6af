"""The build's chart renderer (calcs/chart_renderer.py) against vl-convert in the same process.

Oracle: vl-convert itself, decoded by Pillow: the renderer's PNG must hold exactly the pixels of
vl-convert's rendering of the same specification in the test process (stored as RGB: our charts
are drawn on white, every pixel opaque), and the "over white" compositing of partly transparent
pixels follows the usual formula c·α + 255·(1 − α). The charts are built from constructed frames,
not demo data.
"""

from __future__ import annotations

import threading
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from calcs import chart_renderer, charts


def _spec(points: int = 40, seed: int = 0) -> str:
    rng = np.random.default_rng(seed)
    frame = pd.DataFrame({"month": np.arange(1, 13), "mean_C": rng.uniform(0, 25, 12),
                          "share": rng.uniform(0, 100, 12)})
    chart = charts.monthly_bars(frame, "share", "Share [%]", highlight=50.0)
    return charts.style(chart, f"A constructed chart ({points})", "subtitle").to_json()


def _pixels(png: bytes) -> np.ndarray:
    import io

    from PIL import Image

    return np.asarray(Image.open(io.BytesIO(png)))


def _oracle(spec: str, scale: float) -> np.ndarray:
    """vl-convert's own rendering here, as RGB pixels (after checking that all are opaque)."""
    import vl_convert

    rgba = _pixels(vl_convert.vegalite_to_png(spec, scale=scale))
    assert rgba.shape[2] == 4 and (rgba[..., 3] == 255).all()  # a chart on white: nothing see-through
    return rgba[..., :3]


def _same(png: bytes, spec: str, scale: float) -> bool:
    got = _pixels(png)
    return got.ndim == 3 and got.shape[2] == 3 and np.array_equal(got, _oracle(spec, scale))


@pytest.fixture
def renderer(monkeypatch):
    r = chart_renderer.ChartRenderer()
    monkeypatch.setenv(chart_renderer.ENV, r.address)
    yield r
    r.close()


def test_the_renderer_gives_the_pixels_vl_convert_gives_here(renderer, monkeypatch):
    spec = _spec()
    by_renderer = chart_renderer.render(spec, 2.0)
    assert _same(by_renderer, spec, 2.0)
    assert _same(chart_renderer._ask(renderer.address, spec, 1.0), spec, 1.0)
    monkeypatch.delenv(chart_renderer.ENV)
    assert chart_renderer.render(spec, 2.0) == by_renderer  # rendered here: the same bytes


def test_partly_transparent_pixels_are_laid_on_white():
    import io

    from PIL import Image

    colour = np.array([[[200, 40, 10, 0], [200, 40, 10, 255], [200, 40, 10, 128], [0, 0, 0, 51]]], dtype=np.uint8)
    buffer = io.BytesIO()
    Image.fromarray(colour, "RGBA").save(buffer, format="PNG")
    flat = _pixels(chart_renderer.opaque_png(buffer.getvalue())).astype(float)
    alpha = colour[..., 3:4] / 255.0
    expected = colour[..., :3] * alpha + 255.0 * (1 - alpha)
    assert flat.shape == (1, 4, 3) and np.abs(flat - expected).max() <= 1.0  # 8-bit rounding
    assert flat[0, 0].tolist() == [255, 255, 255] and flat[0, 1].tolist() == [200, 40, 10]


def test_a_bad_specification_is_refused_and_the_renderer_goes_on(renderer):
    with pytest.raises(chart_renderer.ChartError):
        chart_renderer._ask(renderer.address, '{"mark": "no-such-mark", "data": {"values": []}}', 1.0)
    assert chart_renderer._ask(renderer.address, _spec(), 1.0).startswith(b"\x89PNG")


def test_many_kernels_at_once_each_get_their_own_chart(renderer):
    specs = [_spec(seed=s) for s in range(6)]
    got: dict[int, bytes] = {}

    def ask(i: int) -> None:
        got[i] = chart_renderer._ask(renderer.address, specs[i], 1.0)

    threads = [threading.Thread(target=ask, args=(i,)) for i in range(len(specs))]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert all(_same(got[i], specs[i], 1.0) for i in range(len(specs)))


def test_without_a_reachable_renderer_a_kernel_renders_on_its_own(tmp_path, monkeypatch):
    monkeypatch.setattr(chart_renderer, "CONNECT_WAIT", 0.1)
    monkeypatch.setenv(chart_renderer.ENV, str(tmp_path / "nobody-listens.sock"))
    spec = _spec()
    assert _same(chart_renderer.render(spec, 1.0), spec, 1.0)
    monkeypatch.delenv(chart_renderer.ENV)
    assert _same(chart_renderer.render(spec, 1.0), spec, 1.0)


def test_closing_ends_the_renderer_and_removes_its_socket():
    r = chart_renderer.ChartRenderer()
    chart_renderer._ask(r.address, _spec(), 1.0)
    folder = Path(r.address).parent
    r.close()
    assert r._process.poll() is not None and not folder.exists()
    r.close()  # idempotent


def test_the_renderer_ends_with_its_build_process(tmp_path):
    """A build that dies without closing it: the renderer sees the end of its input and goes."""
    import subprocess
    import sys
    import time

    code = ("import sys; sys.path.insert(0, %r); from calcs.chart_renderer import ChartRenderer; "
            "r = ChartRenderer(); print(r._process.pid, r.address, flush=True); import os; os._exit(0)"
            % str(Path(chart_renderer.__file__).resolve().parents[1]))
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60, check=True)
    from calcs.kernel_forks import _alive

    pid = int(out.stdout.split()[0])
    deadline = time.monotonic() + 20
    while time.monotonic() < deadline and _alive(pid):
        time.sleep(0.05)
    assert not _alive(pid)
    assert not Path(out.stdout.split()[1]).parent.exists()  # and took its private folder with it


def test_a_renderer_with_a_cache_renders_each_specification_once(tmp_path, monkeypatch):
    """A chart from the cache is byte for byte the rendered one (and holds vl-convert's pixels); a
    new scale or specification is rendered; a damaged entry is found by its digest and rendered again."""
    cache = tmp_path / "charts"
    r = chart_renderer.ChartRenderer(cache)
    try:
        spec = _spec()
        first = chart_renderer._ask(r.address, spec, 2.0)
        assert _same(first, spec, 2.0)
        entries = sorted(cache.glob("*.chart"))
        assert len(entries) == 1
        import hashlib

        marked = b"taken from the cache"  # an entry with a good digest is answered as it is: not rendered
        entries[0].write_bytes(hashlib.sha256(marked).digest() + marked)
        assert chart_renderer._ask(r.address, spec, 2.0) == marked
        entries[0].write_bytes(hashlib.sha256(first).digest() + first)
        stamp = entries[0].stat().st_mtime_ns
        assert chart_renderer._ask(r.address, spec, 2.0) == first
        assert sorted(cache.glob("*.chart")) == entries
        other = _spec(seed=1)
        assert _same(chart_renderer._ask(r.address, other, 2.0), other, 2.0)
        assert _same(chart_renderer._ask(r.address, spec, 1.0), spec, 1.0)
        assert len(list(cache.glob("*.chart"))) == 3
        # a damaged entry: not used, rendered again and replaced
        entries[0].write_bytes(entries[0].read_bytes()[:32] + b"not a png")
        assert chart_renderer._ask(r.address, spec, 2.0) == first
        assert entries[0].read_bytes()[32:] == first and entries[0].stat().st_mtime_ns != stamp
    finally:
        r.close()
    # what a cached chart is: its key depends on the specification and the scale
    store = chart_renderer.ChartCache(cache)
    assert store.get(store.key(spec, 2.0)) == first
    assert store.key(spec, 2.0) != store.key(spec, 1.0) != store.key(other, 2.0)
    assert store.get(store.key("{}", 2.0)) is None
