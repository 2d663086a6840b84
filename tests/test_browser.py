"""The HTML report in a real browser: headless Chromium opens it offline, builds its DOM
without a console error, and paints a non-blank screenshot of the size asked for.

Skipped, with a message, when no Chromium is installed (``.ci/run`` installs
Debian's ``chromium`` when it runs as root).
"""

from __future__ import annotations

import shutil
import struct
import subprocess
import zlib
from pathlib import Path

import pytest

from checker import api

from conftest import ROOT, run_cli

BROWSER = next((shutil.which(n) for n in ("chromium", "chromium-browser") if shutil.which(n)), None)
pytestmark = pytest.mark.skipif(BROWSER is None, reason="no Chromium installed: the real-browser test of the "
                                                        "HTML report did not run (apt-get install -y chromium)")
SIZE = (1200, 1600)


def browse(page: Path, tmp: Path, *what: str) -> subprocess.CompletedProcess:
    """Run headless Chromium on ``page`` with no network, no profile and console messages on stderr."""
    args = [BROWSER, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
            "--disable-component-update", "--disable-sync", "--no-first-run", "--hide-scrollbars",
            f"--user-data-dir={tmp / 'profile'}", "--enable-logging=stderr", "--v=0",
            f"--window-size={SIZE[0]},{SIZE[1]}", *what, page.resolve().as_uri()]
    return subprocess.run(args, capture_output=True, text=True, timeout=180)


def console_errors(stderr: str) -> list[str]:
    return [line for line in stderr.splitlines()
            if "CONSOLE" in line and ("Uncaught" in line or "rror" in line)]


def png_pixels(data: bytes) -> tuple[int, int, bytes]:
    """Width, height and the inflated image rows (with their filter bytes) of a PNG file."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG file"
    pos, idat = 8, b""
    w = h = 0
    while pos < len(data):
        n, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + n]
        if kind == b"IHDR":
            w, h = struct.unpack(">II", body[:8])
        elif kind == b"IDAT":
            idat += body
        pos += 12 + n
    return w, h, zlib.decompress(idat)


def render(page: Path, tmp: Path, rows: int) -> None:
    dom = browse(page, tmp, "--dump-dom")
    assert dom.returncode == 0, dom.stderr[-2000:]
    assert dom.stdout.count('class="claim ') == rows
    assert dom.stdout.count("<details") >= rows
    assert not console_errors(dom.stderr), console_errors(dom.stderr)
    shot = tmp / "shot.png"
    p = browse(page, tmp, f"--screenshot={shot}")
    assert p.returncode == 0 and shot.is_file(), p.stderr[-2000:]
    w, h, pixels = png_pixels(shot.read_bytes())
    assert (w, h) == SIZE
    # painted, not blank: many distinct byte values, and rows that differ from one another
    assert len(set(pixels)) > 40
    stride = len(pixels) // h
    assert len({pixels[i * stride:(i + 1) * stride] for i in range(h)}) > h // 10


def test_report_of_the_cases_renders(tmp_path):
    out = tmp_path / "cases.html"
    p = run_cli("check", str(ROOT / "cases"), "--html", str(out))
    assert p.returncode == 1 and out.is_file(), p.stderr
    claims = len(api.check_files([str(ROOT / "cases")]).results)
    render(out, tmp_path, rows=claims)


def test_report_of_a_refuted_case_renders(tmp_path):
    out = tmp_path / "rework.html"
    p = run_cli("check", str(ROOT / "cases" / "sixpack_rework_fault.cnl"), "--html", str(out), "--radix", "bin")
    assert p.returncode == 1 and out.is_file(), p.stderr
    render(out, tmp_path, rows=4)


def test_map_page_renders(tmp_path):
    out = tmp_path / "map.html"
    p = run_cli("map", str(ROOT / "cases" / "washer_jets.cnl"), "jets", "--html", str(out))
    assert p.returncode == 1 and out.is_file(), p.stderr
    render(out, tmp_path, rows=0)


def test_a_console_error_would_be_seen(tmp_path):
    # the console check must be able to fail: a page with a script error is caught
    bad = tmp_path / "bad.html"
    bad.write_text("<!DOCTYPE html><p>x</p><script>no_such_function();</script>", encoding="utf-8")
    assert console_errors(browse(bad, tmp_path, "--dump-dom").stderr)


def test_printing_opens_every_claim(tmp_path):
    # printed, the page shows every claim's evidence: it runs to more pages than the same page
    # with its print rules taken out (closed rows then print as their summary line only)
    import re
    out = tmp_path / "demo.html"
    assert run_cli("check", str(ROOT / "cases" / "demo.cnl"), "--html", str(out)).returncode == 1
    text = out.read_text(encoding="utf-8")
    bare = tmp_path / "bare.html"
    stripped = text.replace('d.setAttribute("open", "")', "0")
    stripped = re.sub(r"details::details-content \{[^}]*\}", "", stripped)
    assert stripped != text
    bare.write_text(stripped, encoding="utf-8")

    def pages(page: Path) -> int:
        pdf = tmp_path / (page.stem + ".pdf")
        p = browse(page, tmp_path, f"--print-to-pdf={pdf}", "--no-pdf-header-footer")
        assert p.returncode == 0 and pdf.is_file(), p.stderr[-2000:]
        return len(re.findall(rb"/Type\s*/Page[^s]", pdf.read_bytes()))

    assert pages(out) > pages(bare) >= 1
