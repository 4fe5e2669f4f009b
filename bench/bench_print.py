"""Where the committee member's memo waits: from the click on "Print the memo (PDF)" after a change
to the PDF downloaded, in a real browser (the system Chromium) against a running workbench.

    python bench/bench_print.py            # 5 prints, each after a new proposed spread
    python bench/bench_print.py --runs 3
    python bench/bench_print.py --pause 0    # click as soon as the button shows

Each run types a new proposed spread on the loss page (so every figure, the decision page and the
record change), switches to the memo page, waits ``--pause`` seconds (0.5 by default, as a person
reads the page before clicking; the memo page prints ahead meanwhile), and starts the clock at the
click on the print button; it stops when the browser has the PDF downloaded (the download button
clicked as soon as it shows). The browser, the server and the chart browser share the machine's cores, as in use. The
first print of the session starts nothing extra: the workbench starts its chart browser ahead of
printing, as it does for a user. Prints the median and every run against the 1.5 s target.
"""

from __future__ import annotations

import argparse
import asyncio
import os
import signal
import statistics
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_keystroke import CHROMIUM, RAROC, start_server  # noqa: E402

TARGET_S = 1.5
SPREADS = ("2.1", "2.4", "1.9", "2.6", "2.2", "2.8", "1.7")


async def prints(url: str, runs: int, pause: float) -> list[float]:
    from playwright.async_api import async_playwright

    async with async_playwright() as p:
        browser = await p.chromium.launch(
            executable_path=CHROMIUM, headless=True, args=["--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage"]
        )
        context = await browser.new_context(viewport={"width": 1400, "height": 1000}, accept_downloads=True)
        page = await context.new_page()
        times = []
        for i in range(runs + 1):  # the first print warms the session's caches: not timed
            await page.goto(url + "/loss", wait_until="networkidle", timeout=240000)
            box = page.get_by_role("textbox", name="Proposed spread (% a year)", exact=True)
            await box.wait_for(timeout=240000)
            before = await page.evaluate(RAROC)
            await box.fill(SPREADS[i % len(SPREADS)])
            await box.press("Enter")
            await page.wait_for_function(
                f"(old) => {{ const v = ({RAROC})(); return v !== null && v !== old; }}", arg=before, timeout=60000
            )
            await page.get_by_role("link", name="Memo", exact=False).first.click()
            button = page.get_by_role("button", name="Print the memo (PDF)")
            await button.wait_for(timeout=120000)
            await page.wait_for_timeout(pause * 1000)  # the page settles, as a person reads it before clicking
            t0 = time.perf_counter()
            await button.click()
            download_button = page.get_by_role("button", name="Memo (PDF)", exact=True)
            await download_button.wait_for(timeout=120000)
            async with page.expect_download(timeout=120000) as info:
                await download_button.click()
            download = await info.value
            path = await download.path()
            elapsed = time.perf_counter() - t0
            if not Path(path).read_bytes().startswith(b"%PDF"):
                raise RuntimeError("the download is not a PDF")
            if i:
                times.append(elapsed)
        await browser.close()
    return times


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=5)
    parser.add_argument(
        "--pause", type=float, default=0.5, help="seconds between the memo page showing and the click (default 0.5)"
    )
    args = parser.parse_args()
    if not Path(CHROMIUM).exists():
        print("bench_print: needs the system Chromium at /usr/bin/chromium")
        return 0
    with tempfile.TemporaryDirectory() as workdir:
        proc, url = start_server(workdir)
        try:
            times = asyncio.run(prints(url, args.runs, args.pause))
        finally:
            os.killpg(proc.pid, signal.SIGTERM)
            proc.wait(timeout=20)
    median = statistics.median(times)
    print(
        f"workbench, click on Print {args.pause:g} s after the memo page shows, after a change, to the PDF "
        f"downloaded: median {median:.2f} s "
        f"(runs {', '.join(f'{t:.2f}' for t in times)}); x{median / TARGET_S:.2f} of the {TARGET_S} s target"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
