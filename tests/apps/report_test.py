"""embed --plots-dir end to end: the figures and report.html are written with the map, the
page is self-contained (no script, no stylesheet link, every image a data: URI), and it
(and the page of `unfurl sweep`) renders in headless chromium (Debian's package, a real browser as the outside reference): no
console errors, every image loaded (natural width as stated), a screenshot that is not blank.
Exits 77 (ctest: skipped) with a message when chromium is missing."""

import os
import re
import shutil
import subprocess
import sys
import tempfile

import numpy as np

sys.path.insert(0, os.path.dirname(__file__))
from cli_support import check, finish, refused, succeeds, swiss_roll  # noqa: E402
from png_support import PngError, read_png  # noqa: E402

work = tempfile.mkdtemp(prefix="unfurl-report-")
figs = os.path.join(work, "figs", "run1")  # two missing levels: embed creates them
np.savetxt(os.path.join(work, "roll.csv"), swiss_roll(500, 5), delimiter=",")
succeeds("embed with --plots-dir", ["embed", os.path.join(work, "roll.csv"), "-o",
                                       os.path.join(work, "roll.h5"), "--plots-dir", figs,
                                       "--quiet"])
expected = ["map.png", "map_trustworthiness.png", "residual_variance.png", "scores.png",
            "spectrum.png", "report.html"]
present = sorted(os.listdir(figs)) if os.path.isdir(figs) else []
check("the folder holds the figures and report.html, nothing else", present == sorted(expected),
      f"{present}")
report = os.path.join(figs, "report.html")
html = open(report, encoding="utf-8").read() if os.path.exists(report) else ""
sources = re.findall(r'<img src="([^"]*)"', html)
check("report.html embeds five images as data: URIs",
      len(sources) == 5 and all(s.startswith("data:image/png;base64,") for s in sources),
      f"{len(sources)} images")
check("report.html loads nothing from elsewhere (no script, link, http)",
      not re.search(r"<script|<link|https?://|src=\"(?!data:)", html))

# A failed run leaves no folder behind: the output map's folder does not exist.
refused("a run whose map cannot be written", [
    "embed", os.path.join(work, "roll.csv"), "-o", os.path.join(work, "no", "m.h5"),
    "--plots-dir", os.path.join(work, "figs2")], 73, ["m.h5"], work)

# The sweep's page: the same page code, more images (a small map per setting).
sweep_dir = os.path.join(work, "sweep")
succeeds("sweep writes its page", ["sweep", os.path.join(work, "roll.csv"), "--k", "5:10:5",
                                    "--out-dir", sweep_dir, "--quiet"])
sweep_report = os.path.join(sweep_dir, "report.html")
sweep_html = open(sweep_report, encoding="utf-8").read() if os.path.exists(sweep_report) else ""
sweep_sources = re.findall(r'<img src="([^"]*)"', sweep_html)
check("the sweep's report.html embeds its images as data: URIs and loads nothing else",
      len(sweep_sources) >= 3 and all(x.startswith("data:image/png;base64,")
                                      for x in sweep_sources)
      and not re.search(r"<script|<link|https?://|src=\"(?!data:)", sweep_html),
      f"{len(sweep_sources)} images")

chromium = shutil.which("chromium")
if not chromium:
    print("SKIP: chromium is not installed (bash scripts/setup-debian.sh installs it); the "
          "report was not rendered")
    finish(work)
    sys.exit(77)

flags = [chromium, "--headless", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
         "--hide-scrollbars", "--virtual-time-budget=5000"]
# A copy of the page with a probe at the top of <head>: it records script errors, failed
# loads (error events in the capture phase) and console.error calls, and on load writes each
# image's natural size into the DOM that --dump-dom prints.
probe = """<script>
var probeErrors = [];
window.addEventListener('error', function (e) {
  probeErrors.push(e.message || ('failed to load ' + (e.target && (e.target.src || e.target.href))));
}, true);
var probeConsoleError = console.error;
console.error = function () { probeErrors.push(Array.from(arguments).join(' ')); };
window.addEventListener('load', function () {
  var sizes = Array.from(document.images).map(function (i) {
    return i.complete + ':' + i.naturalWidth + 'x' + i.naturalHeight; });
  var out = document.createElement('pre');
  out.id = 'probe';
  out.textContent = 'IMAGES ' + sizes.join(' ') + ' ERRORS ' + probeErrors.length + ' ' +
                    probeErrors.join(' | ');
  document.body.appendChild(out);
});
</script>"""
def rendered(what, page_path, page_html, count):
    """Loads a probed copy of the page in chromium: every image loaded at its stated size and
    no script error, failed load or console error."""
    probed = page_path.replace(".html", "-probed.html")
    with open(probed, "w", encoding="utf-8") as f:
        f.write(page_html.replace("<head>", "<head>\n" + probe, 1))
    dom = subprocess.run(flags + ["--dump-dom", "file://" + probed], capture_output=True,
                         text=True, timeout=120)
    os.remove(probed)
    found = re.search(r'<pre id="probe">IMAGES (.*?) ERRORS (\d+) (.*?)</pre>', dom.stdout, re.S)
    check(f"{what}: chromium ran the page to its load event", found is not None,
          f"exit {dom.returncode}; {dom.stderr[-400:]!r}")
    if found:
        sizes = found.group(1).split()
        stated = [f"true:{w}x{h}" for w, h in re.findall(r'width="(\d+)" height="(\d+)"',
                                                          page_html)]
        check(f"{what}: every image loaded at the size the page states",
              sizes == stated and len(sizes) == count, f"{sizes} vs {stated}")
        check(f"{what}: no script error, failed load or console error", found.group(2) == "0",
              found.group(3))


rendered("embed's page", report, html, 5)
rendered("the sweep's page", sweep_report, sweep_html, len(sweep_sources))

shot = os.path.join(work, "shot.png")
r = subprocess.run(flags + ["--enable-logging=stderr", "--v=0", "--window-size=800,900",
                            "--screenshot=" + shot, "file://" + report], capture_output=True,
                   text=True, timeout=120)
console = [line for line in r.stderr.splitlines() if "CONSOLE" in line]
check("the browser logged no console message for the page", not console, f"{console[:3]}")
try:
    with open(shot, "rb") as f:
        w, h, px = read_png(f.read())
    colours = {c for row in px for c in row}
    inked = sum(1 for row in px for c in row if c != (255, 255, 255))
    # Chromium's own PNG, read by the outside reader: not blank means text and a figure.
    check("the screenshot is 800 x 900 and not blank (many colours, > 3% inked pixels)",
          (w, h) == (800, 900) and len(colours) > 50 and inked > 0.03 * w * h,
          f"{w} x {h}, {len(colours)} colours, {inked} inked pixels")
except (OSError, PngError) as e:
    check("the screenshot exists and decodes", False, str(e))
finish(work)
