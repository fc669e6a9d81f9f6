"""unfurl plot end to end: the figures decode with a PNG reader other than ours (png_support,
Python's zlib) at the stated size, points at known positions light the expected pixels, the
SVG parses as XML (xml.etree), and bad requests are refused without touching any file."""

import os
import sys
import tempfile
import xml.etree.ElementTree as ET

import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(__file__))
from cli_support import check, finish, refused, run, succeeds, swiss_roll  # noqa: E402
from png_support import PngError, read_png  # noqa: E402

work = tempfile.mkdtemp(prefix="unfurl-plots-")


def path(name):
    return os.path.join(work, name)


def decode(name):
    with open(path(name), "rb") as f:
        return read_png(f.read())


def write_map(name, coords):
    """A map file with only the datasets a map must have (README "The map file")."""
    with h5py.File(path(name), "w") as f:
        f.attrs["format_version"] = 1
        f["coords"] = np.asarray(coords, dtype=np.float32)
        f["rows"] = np.arange(len(coords), dtype=np.int64)


def clusters(rows, colour):
    """Centres (x, y) of the 8-connected groups of pixels of exactly `colour`."""
    lit = {(x, y) for y, row in enumerate(rows) for x, c in enumerate(row) if c == colour}
    out = []
    while lit:
        stack, group = [lit.pop()], []
        while stack:
            x, y = stack.pop()
            group.append((x, y))
            for dx in (-1, 0, 1):
                for dy in (-1, 0, 1):
                    if (x + dx, y + dy) in lit:
                        lit.remove((x + dx, y + dy))
                        stack.append((x + dx, y + dy))
        out.append((sum(p[0] for p in group) / len(group), sum(p[1] for p in group) / len(group)))
    return out


# Known positions: the corners of a 2 x 1 rectangle and one point at (0.5, 0.75).
known = [[0, 0], [2, 0], [0, 1], [2, 1], [0.5, 0.75]]
write_map("known.h5", known)
succeeds("plot of five known points", ["plot", path("known.h5"), "-o", path("known.png"),
                                       "--size", "640x480"])
try:
    width, height, rows = decode("known.png")
    check("PNG: chunks, CRCs and filters decode; size is the --size asked",
          (width, height) == (640, 480), f"{width} x {height}")
    # One point per cell: every point has the low end of viridis, (68, 1, 84) in 8 bits
    # (the published table's first entry, 0.267004 0.004874 0.329415; from memory of it).
    found = clusters(rows, (68, 1, 84))
    check("five separate groups of lit pixels, one per point", len(found) == 5, f"{found}")
    if len(found) == 5:
        xs = sorted(c[0] for c in found)
        ys = sorted(c[1] for c in found)
        left, right = xs[0], xs[-1]
        top, bottom = ys[0], ys[-1]
        # Analytic: equal scales on both axes keep the 2 : 1 rectangle 2 : 1 in pixels.
        aspect = (right - left) / (bottom - top)
        check("both axes share one scale (2 x 1 data rectangle is 2 : 1 in pixels)",
              abs(aspect - 2) < 0.03, f"aspect {aspect:.3f}")
        # The odd point (0.5, 0.75) lies a quarter of the width from the left and a quarter of
        # the height from the top: x grows to the right, y upwards.
        odd = [c for c in found if left + 2 < c[0] < right - 2]
        ok = len(odd) == 1 and abs((odd[0][0] - left) / (right - left) - 0.25) < 0.02 and \
            abs((odd[0][1] - top) / (bottom - top) - 0.25) < 0.03
        check("the point (0.5, 0.75) lights the pixels at 1/4 across and 1/4 down", ok, f"{odd}")
        corners = [c for c in found if c not in odd]
        check("the four corners sit on the rectangle's corners",
              all(min(abs(c[0] - left), abs(c[0] - right)) < 1.5 and
                  min(abs(c[1] - top), abs(c[1] - bottom)) < 1.5 for c in corners), f"{corners}")
except PngError as e:
    check("PNG decodes", False, str(e))

# SVG: well-formed XML with the stated size.
succeeds("plot as SVG", ["plot", path("known.h5"), "-o", path("known.svg"), "--size", "500x400"])
try:
    root = ET.parse(path("known.svg")).getroot()
    check("SVG parses as XML with an <svg> root of the stated size",
          root.tag.endswith("svg") and root.get("width", "").startswith("500")
          and root.get("height", "").startswith("400"), f"{root.tag} {root.attrib}")
except ET.ParseError as e:
    check("SVG parses as XML", False, str(e))

# A real map: embed a Swiss roll (DESIGN.md section 6), then each figure of it, coloured by a
# label dataset and by the per-point terms.
np.savetxt(path("roll.csv"), swiss_roll(600, 3), delimiter=",")
succeeds("embed a 600-point Swiss roll", ["embed", path("roll.csv"), "-o", path("roll.h5"),
                                          "--score-k", "5", "10", "--quiet"])
labels = np.arange(600) % 3
with h5py.File(path("labels.h5"), "w") as f:
    f["group"] = labels.astype(np.int32)
for name, extra in [("by_label", ["--colour-file", path("labels.h5"), "--colour-dataset",
                                  "/group"]),
                    ("by_terms", ["--colour-by", "trustworthiness"]),
                    ("residual", ["--figure", "residual-variance"]),
                    ("scores", ["--figure", "scores"]),
                    ("spectrum", ["--figure", "spectrum"])]:
    succeeds(f"plot {name}", ["plot", path("roll.h5"), "-o", path(name + ".png"), "--size",
                              "480x360", *extra])
    try:
        w, h, px = decode(name + ".png")
        colours = {c for row in px for c in row}
        check(f"{name}: decodes at 480 x 360 with more than background and text",
              (w, h) == (480, 360) and len(colours) > 20, f"{w} x {h}, {len(colours)} colours")
    except (PngError, OSError) as e:
        check(f"{name}: decodes", False, str(e))
try:
    _, _, px = decode("by_label.png")
    # The three labels are categories: the first three colours of Okabe and Ito's palette
    # (Okabe and Ito 2008, "Color Universal Design": #E69F00, #56B4E9, #009E73).
    seen = {c for row in px for c in row}
    check("three labels drawn in three categorical colours",
          {(0xE6, 0x9F, 0x00), (0x56, 0xB4, 0xE9), (0x00, 0x9E, 0x73)} <= seen)
except (PngError, OSError) as e:
    check("by_label decodes", False, str(e))

# Refusals: exit code, one line naming the culprit, nothing written.
with open(path("keep.png"), "wb") as f:
    f.write(b"earlier figure")
refused("an extension that is not .png or .svg", ["plot", path("known.h5"), "-o",
                                                  path("fig.jpg")], 64, ["fig.jpg", ".jpg"], work)
refused("a missing map", ["plot", path("nothing.h5"), "-o", path("keep.png")], 66,
        ["nothing.h5"], work)
refused("terms asked of a map without scores", ["plot", path("known.h5"), "-o", path("keep.png"),
                                                "--colour-by", "trustworthiness"], 65,
        ["known.h5", "trustworthiness"], work)
np.savetxt(path("short.csv"), np.arange(3.0))
refused("a colour file with fewer rows than the map's input", [
    "plot", path("roll.h5"), "-o", path("keep.png"), "--colour-file", path("short.csv")], 65,
    ["short.csv", "3 rows"], work)
refused("colour options on a curve figure", ["plot", path("roll.h5"), "-o", path("keep.png"),
                                             "--figure", "scores", "--colour-by", "continuity"],
        64, ["--colour-by"], work)
refused("a column beyond the colour file's columns", [
    "plot", path("roll.h5"), "-o", path("keep.png"), "--colour-file", path("roll.csv"),
    "--colour-column", "3"], 65, ["roll.csv", "column 3"], work)
refused("axes beyond the map's", ["plot", path("roll.h5"), "-o", path("keep.png"), "--axes",
                                  "1,3"], 64, ["--axes"], work)
refused("a size too small", ["plot", path("roll.h5"), "-o", path("keep.png"), "--size",
                             "10x10"], 64, ["--size"], work)
os.symlink("roll.h5", path("alias.png"))
refused("the map as its own figure (through a symlink)", ["plot", path("roll.h5"), "-o",
                                                          path("alias.png")], 73, ["alias.png"],
        work)
finish(work)
