"""A real server on a free 127.0.0.1 port and a headless Chromium driven by Selenium, for the
browser test (tests/web/test_browser.py) and scripts/web_screenshot.py. Traffic stays on the
loopback interface."""

from __future__ import annotations

import contextlib
import os
import shutil
import socket
import subprocess
import sys
import tempfile
import time
import urllib.request
from collections.abc import Iterator
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

#: Chromium flags: no sandbox (containers), nothing that talks to the network by itself.
CHROMIUM_FLAGS = (
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-dev-shm-usage",
    "--window-size=1280,1600",
)


def browser_missing() -> str | None:
    """Why the browser test cannot run here, or None."""
    try:
        import selenium  # noqa: F401
    except ImportError:
        return "selenium is not installed (pip install '.[test]')"
    if not (shutil.which("chromium") and shutil.which("chromedriver")):
        return "chromium and chromium-driver are not installed (apt-get install them)"
    return None


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@contextlib.contextmanager
def running_server(library: Path, *extra: str) -> Iterator[str]:
    """``reflib serve`` in a subprocess on a free loopback port; yields its base URL."""
    port = free_port()
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    env.pop("REFLIB_TOKEN", None)
    cmd = [sys.executable, "-m", "reflib", "serve", "--host", "127.0.0.1", "--port", str(port),
           "-L", str(library), *extra]  # fmt: skip
    proc = subprocess.Popen(cmd, env=env, stdout=subprocess.PIPE, stderr=subprocess.STDOUT)
    url = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 60
        while True:
            try:
                with urllib.request.urlopen(url + "/api/compounds", timeout=2):
                    break
            except OSError:
                if proc.poll() is not None or time.monotonic() > deadline:
                    out = proc.stdout.read().decode() if proc.stdout else ""
                    raise RuntimeError(f"server did not start: {out[-2000:]}") from None
                time.sleep(0.2)
        yield url
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            proc.kill()


@contextlib.contextmanager
def chromium() -> Iterator:
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    opts = webdriver.ChromeOptions()
    profile = tempfile.mkdtemp(prefix="reflib-chromium-")
    for flag in CHROMIUM_FLAGS:
        opts.add_argument(flag)
    opts.add_argument(f"--user-data-dir={profile}")
    opts.binary_location = shutil.which("chromium")
    driver = webdriver.Chrome(service=Service(shutil.which("chromedriver")), options=opts)
    driver.set_page_load_timeout(120)
    try:
        yield driver
    finally:
        driver.quit()
        shutil.rmtree(profile, ignore_errors=True)
