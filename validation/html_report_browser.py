"""Open a run folder's report.html in a headless browser and save a screenshot.

Checks that the page written by ``thinfilm report`` renders offline: the browser is started
without network access to anything but the file, and the screenshot (report_screenshot.png in
the run folder) shows the figures. Needs a Chromium or Firefox binary on PATH; without one the
script says so and exits with status 3 (the test suite checks the page structure with
html.parser instead).

Run: ``python validation/html_report_browser.py RUN_DIR``.
"""

import shutil
import subprocess
import sys
from pathlib import Path

from thinfilm.render.html_report import write_html_report


def main(argv=None):
    argv = sys.argv[1:] if argv is None else argv
    run = Path(argv[0]).resolve()
    page = write_html_report(run)
    shot = run / "report_screenshot.png"
    for name in ("chromium", "chromium-browser", "google-chrome", "firefox"):
        exe = shutil.which(name)
        if exe is None:
            continue
        if name == "firefox":
            cmd = [exe, "--headless", "--screenshot", str(shot), page.as_uri()]
        else:
            cmd = [exe, "--headless", "--disable-gpu", "--no-sandbox", "--proxy-server=0.0.0.0:1",
                   f"--screenshot={shot}", "--window-size=1200,3000", page.as_uri()]
        subprocess.run(cmd, check=True, timeout=120)
        print(f"{name}: rendered {page} -> {shot}")
        return 0
    print("no headless browser (chromium, google-chrome, firefox) found on PATH; "
          f"{page} was written but not rendered")
    return 3


if __name__ == "__main__":
    sys.exit(main())
