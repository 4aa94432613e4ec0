"""Screenshot of the web page for docs/group-server.md: the invented demo library, one demo
crude searched in headless Chromium against ``reflib serve`` on a free 127.0.0.1 port.

    python scripts/web_screenshot.py [--out docs/web-page.png] [--page search|library]
"""

from __future__ import annotations

import argparse
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests" / "web"))
sys.path.insert(0, str(ROOT))

from conftest import DEMO, build_demo_library  # noqa: E402
from web_browser import browser_missing, chromium, running_server  # noqa: E402


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", default=str(ROOT / "docs" / "web-page.png"))
    ap.add_argument("--page", choices=("search", "library"), default="search")
    ap.add_argument("--width", type=int, default=1280)
    args = ap.parse_args()
    why = browser_missing()
    if why:
        print(f"web_screenshot: {why}", file=sys.stderr)
        return 2
    from selenium.webdriver.common.by import By

    with tempfile.TemporaryDirectory() as tmp:
        lib = build_demo_library(Path(tmp) / "demo.sqlite")
        with running_server(lib) as url, chromium() as driver:
            if args.page == "search":
                driver.get(url + "/")
                crude = DEMO / "crudes" / "AO-214-04-crude-film.jdx"
                driver.find_element(By.ID, "file").send_keys(str(crude))
                driver.find_element(By.ID, "prep").send_keys("film")
                driver.find_element(By.ID, "run-search").click()
                driver.find_element(By.ID, "verdict")
            else:
                driver.get(url + "/library")
            height = driver.execute_script("return document.documentElement.scrollHeight")
            driver.set_window_size(args.width, min(int(height) + 120, 6000))
            driver.save_screenshot(args.out)
    print(f"wrote {args.out}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
