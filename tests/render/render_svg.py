"""Renders planckton's SVG plots to PNG with headless Chromium (Debian's `chromium` package), and checks
the result: the PNG (read here with zlib only: RFC 2083 / ISO 15948 chunks, the five scanline
filters undone) has the expected size and is a picture, not a blank page.

    render_svg.py --svg in.svg --png out.png            render one file
    render_svg.py --cli build/cli/planckton --sample sample-spectra/x.json --png out.png
                                                        fit a request, plot it, render it
    render_svg.py --cli ... --sample ... --check        the ctest render.svg_to_png: render into a
                                                        temporary directory and check the PNG

Chromium: `chromium --headless --disable-gpu --no-sandbox --screenshot=PNG --window-size=800,600
file:///...svg` (checked with Chromium 156 of Debian 12); a fresh --user-data-dir per run so that
parallel runs do not share a profile, and --hide-scrollbars so that none is drawn into the picture.
Prints one line per check and ends with "N passed, M failed"."""
import argparse
import os
import shutil
import struct
import subprocess
import sys
import tempfile
import zlib

WIDTH, HEIGHT = 800, 600


def chromium_binary():
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    return None


def render(svg_path, png_path, width=WIDTH, height=HEIGHT, chromium=None):
    """Renders svg_path to png_path; returns (ok, detail)."""
    chromium = chromium or chromium_binary()
    if chromium is None:
        return False, "no chromium on the PATH (scripts/install-deps installs Debian's chromium)"
    with tempfile.TemporaryDirectory(prefix="planckton-chromium-") as profile:
        command = [chromium, "--headless", "--disable-gpu", "--no-sandbox", "--hide-scrollbars",
                   "--no-first-run", "--no-default-browser-check", f"--user-data-dir={profile}",
                   f"--screenshot={os.path.abspath(png_path)}", f"--window-size={width},{height}",
                   "file://" + os.path.abspath(svg_path)]
        env = dict(os.environ, HOME=profile)
        try:
            done = subprocess.run(command, capture_output=True, text=True, timeout=120, env=env)
        except subprocess.TimeoutExpired:
            return False, "chromium did not finish within 120 s"
    if not os.path.exists(png_path):
        return False, f"chromium exit {done.returncode}, no PNG written: {done.stderr[-400:]}"
    return True, f"chromium exit {done.returncode}"


def read_png(path):
    """(width, height, rows of RGB(A) tuples) of an 8-bit RGB or RGBA PNG, non-interlaced."""
    with open(path, "rb") as f:
        data = f.read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("not a PNG signature")
    pos, idat, header = 8, b"", None
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        if kind == b"IHDR":
            header = struct.unpack(">IIBBBBB", body)
        elif kind == b"IDAT":
            idat += body
        elif kind == b"IEND":
            break
        pos += 12 + length
    width, height, depth, colour, _, _, interlace = header
    if depth != 8 or colour not in (2, 6) or interlace != 0:
        raise ValueError(f"unsupported PNG: depth {depth}, colour type {colour}, interlace {interlace}")
    channels = 3 if colour == 2 else 4
    raw = zlib.decompress(idat)
    stride = width * channels
    rows, previous = [], bytearray(stride)
    for y in range(height):
        start = y * (stride + 1)
        kind, line = raw[start], bytearray(raw[start + 1:start + 1 + stride])
        for i in range(stride):
            a = line[i - channels] if i >= channels else 0
            b = previous[i]
            c = previous[i - channels] if i >= channels else 0
            if kind == 1:
                line[i] = (line[i] + a) & 0xFF
            elif kind == 2:
                line[i] = (line[i] + b) & 0xFF
            elif kind == 3:
                line[i] = (line[i] + (a + b) // 2) & 0xFF
            elif kind == 4:  # Paeth
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                line[i] = (line[i] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 0xFF
        rows.append(bytes(line))
        previous = line
    pixels = [[tuple(row[x * channels:x * channels + 3]) for x in range(width)] for row in rows]
    return width, height, pixels


def check_png(path, checks):
    try:
        width, height, pixels = read_png(path)
    except (ValueError, OSError, zlib.error, struct.error, TypeError) as e:
        checks.check("the PNG can be read", False, str(e))
        return
    checks.check("the PNG can be read", True)
    checks.check(f"the PNG is {WIDTH} x {HEIGHT}", (width, height) == (WIDTH, HEIGHT), f"{width} x {height}")
    flat = [p for row in pixels for p in row]
    colours = set(flat)
    not_white = sum(1 for p in flat if p != (255, 255, 255)) / len(flat)
    checks.check("the picture is not blank: at least 30 distinct colours", len(colours) >= 30, f"{len(colours)} colours")
    checks.check("between 2 % and 60 % of the pixels are not white", 0.02 <= not_white <= 0.60, f"{100 * not_white:.1f} %")
    reddish = sum(1 for r, g, b in flat if r > 150 and g < 110 and b < 110)
    bluish = sum(1 for r, g, b in flat if b > 100 and r < 90 and b > r + 40)
    checks.check("the model curve is drawn (red pixels)", reddish > 300, f"{reddish} pixels")
    checks.check("the data are drawn (blue pixels)", bluish > 100, f"{bluish} pixels")
    dark = sum(1 for r, g, b in flat if r < 80 and g < 80 and b < 80)
    checks.check("the frames, ticks and labels are drawn (dark pixels)", dark > 2000, f"{dark} pixels")


class Checks:
    def __init__(self):
        self.passed = self.failed = 0

    def check(self, name, ok, detail=""):
        print(f"{'PASS' if ok else 'FAIL'}  {name}  {detail}".rstrip(), flush=True)
        if ok:
            self.passed += 1
        else:
            self.failed += 1

    def finish(self):
        print(f"{self.passed} passed, {self.failed} failed")
        sys.exit(0 if self.failed == 0 and self.passed > 0 else 1)


def main():
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--svg", help="the SVG to render")
    parser.add_argument("--cli", help="the planckton CLI, to plot --sample")
    parser.add_argument("--sample", help="a fit request (JSON) to plot with the CLI")
    parser.add_argument("--png", help="where to write the PNG")
    parser.add_argument("--check", action="store_true", help="check the PNG (and render into a temporary directory)")
    args = parser.parse_args()
    checks = Checks()
    with tempfile.TemporaryDirectory(prefix="planckton-render-") as work:
        svg = args.svg
        if svg is None:
            if not (args.cli and args.sample):
                parser.error("give --svg, or --cli and --sample")
            svg = os.path.join(work, "fit.svg")
            done = subprocess.run([args.cli, "fit", args.sample, "--plot", svg], capture_output=True, text=True, timeout=120)
            checks.check("the CLI writes the SVG", done.returncode == 0 and os.path.exists(svg), done.stderr.strip()[:300])
            if done.returncode != 0:
                checks.finish()
        png = os.path.join(work, "fit.png") if args.check or not args.png else args.png
        ok, detail = render(svg, png)
        checks.check("chromium renders the SVG to a PNG", ok, detail)
        if ok and args.check:
            check_png(png, checks)
        if ok and args.png and png != args.png:
            shutil.copyfile(png, args.png)
    checks.finish()


if __name__ == "__main__":
    main()
