"""`planckton fit --plot FILE` and `--output json|csv|svg` for every sample: the SVG parses as XML
(xml.etree.ElementTree) in the SVG namespace, with a <title> and a <desc>, one marker per point (or
band), error bars, the model path, the band polygon, the residual panel, axis labels with the units,
log axes where the data span more than 1.5 decades (always for photometry), the excluded ranges
shaded, upper limits as arrows; it is self-contained and deterministic. The CSV parses and its model
column is the Planck curve of the JSON response's temperature and scale, computed here:

    B_lambda = 2 h c^2 / lambda^5 / (exp(h c / (lambda k T)) - 1),  B_nu = 2 h nu^3 / c^2 / (exp(h nu / (k T)) - 1)

(Planck 1901; with the CODATA 2018 exact values of h, c and k: E. Tiesinga et al., Rev. Mod. Phys. 93,
025010 (2021), table XXXI), in the data's convention and unit (the unit factors are the definitions
of erg, Angstrom, micrometre and jansky: 1 erg/s/cm2/Angstrom = 1e7 W m^-3, 1 W/m2/um = 1e6 W m^-3,
1 W/m2/sr/nm = 1e9 W m^-2 sr^-1 m^-1, 1 mJy = 1e-29 W m^-2 Hz^-1), within 1e-9 relative. A band's model
(an integral through the band's response) is compared with the JSON response's "bands" instead.
The table samples (CSV with the README's flags and the JSON request's exclude, loss and distance)
give the same SVG and CSV as their JSON requests."""
import argparse
import csv
import io
import json
import math
import os
import re
import subprocess
import tempfile
import xml.etree.ElementTree as ET

from clitest import Checks

parser = argparse.ArgumentParser()
parser.add_argument("--cli", required=True)
parser.add_argument("--samples", required=True)
args = parser.parse_args()
checks = Checks()

SVG = "{http://www.w3.org/2000/svg}"
H, C, K = 6.62607015e-34, 299792458.0, 1.380649e-23  # CODATA 2018, exact
# y unit -> (convention, SI factor); x unit -> (kind, SI factor)
Y_UNITS = {"erg/s/cm2/Angstrom": ("wavelength", 1e7), "W/m2/um": ("wavelength", 1e6),
           "W/m2/sr/nm": ("wavelength", 1e9), "mJy": ("frequency", 1e-29)}
X_UNITS = {"nm": ("wavelength", 1e-9), "THz": ("frequency", 1e12)}


def run(arguments):
    done = subprocess.run([args.cli, *arguments], capture_output=True, timeout=120)
    return done.returncode, done.stdout, done.stderr.decode(errors="replace")


def planck_model(x, x_unit, y_unit, temperature, scale):
    kind, factor = X_UNITS[x_unit]
    nu = x * factor if kind == "frequency" else C / (x * factor)
    convention, y_factor = Y_UNITS[y_unit]
    if convention == "frequency":
        b = 2 * H * nu ** 3 / C ** 2 / math.expm1(H * nu / (K * temperature))
    else:
        lam = C / nu
        b = 2 * H * C ** 2 / lam ** 5 / math.expm1(H * C / (lam * K * temperature))
    return scale * b / y_factor


def classes(element):
    return (element.get("class") or "").split()


def find_all(root, tag, *wanted):
    """Elements of the tag whose class list is exactly `wanted`."""
    return [e for e in root.iter(SVG + tag) if classes(e) == list(wanted)]


def subpaths(d):
    return len(re.findall(r"M", d or ""))


def text_of(element):
    return "".join(element.itertext())


def axis(root, name):
    for g in root.iter(SVG + "g"):
        if classes(g) == ["axis", name]:
            return g
    return None


def axis_label(root, name):
    g = axis(root, name)
    labels = [e for e in g.iter(SVG + "text") if "axis-label" in classes(e)] if g is not None else []
    return text_of(labels[0]) if labels else ""


def spans_decades(values):
    return min(values) > 0 and max(values) / min(values) > 10 ** 1.5


def decimals_for(error):
    return 1 if not error or error <= 0 else min(max(1 - math.floor(math.log10(error)), 0), 8)


def parse_svg(name, data):
    try:
        return ET.fromstring(data)
    except ET.ParseError as e:
        checks.check(f"{name}: the SVG parses as XML", False, str(e))
        return None


def check_common(name, root, data, doc):
    checks.check(f"{name}: the SVG parses as XML", True)
    checks.check(f"{name}: root is <svg> in the SVG namespace", root.tag == SVG + "svg", root.tag)
    checks.check(f"{name}: 800 x 600", (root.get("width"), root.get("height"), root.get("viewBox")) == ("800", "600", "0 0 800 600"))
    title = root.find(SVG + "title")
    desc = root.find(SVG + "desc")
    t = doc["parameters"]["temperature"]
    shown = f"{t['value']:.{decimals_for(t['error'])}f}"
    checks.check(f"{name}: a <title> with the temperature {shown} K", title is not None and f"T = {shown}" in text_of(title),
                 text_of(title) if title is not None else "no title")
    lo, hi = t["interval_68"]
    d = decimals_for(t["error"])
    checks.check(f"{name}: the title gives the 68 % interval", title is not None and f"{lo:.{d}f}" in text_of(title)
                 and f"{hi:.{d}f}" in text_of(title), text_of(title) if title is not None else "")
    checks.check(f"{name}: a <desc>", desc is not None and len(text_of(desc)) > 40)
    checks.check(f"{name}: accessible (role img, labelled by title and desc)",
                 root.get("role") == "img" and root.get("aria-labelledby") == "plot-title plot-desc")
    text = data.decode("utf-8")
    checks.check(f"{name}: no NaN or infinity in the document", re.search(r"\b(nan|inf|infinity)\b", text, re.IGNORECASE) is None)
    checks.check(f"{name}: self-contained (no href, script, style, image, font-face)",
                 not re.search(r"href|<script|<style|<image|@font-face|url\((?!#)", text))
    model = find_all(root, "path", "model")
    checks.check(f"{name}: the model path", len(model) == 1 and (model[0].get("d") or "").count("L") >= 300,
                 f"{len(model)} model paths")
    band = find_all(root, "polygon", "model-band")
    checks.check(f"{name}: the model's one-sigma band polygon", len(band) == 1 and len((band[0].get("points") or "").split()) >= 600)
    residuals = [g for g in root.iter(SVG + "g") if classes(g) == ["panel", "residuals"]]
    checks.check(f"{name}: the residual panel", len(residuals) == 1 and axis(root, "residual") is not None)
    legend = [g for g in root.iter(SVG + "g") if classes(g) == ["legend"]]
    checks.check(f"{name}: a legend", len(legend) == 1 and len(list(legend[0].iter(SVG + "text"))) >= 3)
    peak = [g for g in root.iter(SVG + "g") if classes(g) == ["peak"]]
    checks.check(f"{name}: the peak is marked", len(peak) == 1 and "peak" in text_of(peak[0]))
    return residuals[0] if residuals else None


def residual_marks(panel):
    if panel is None:
        return 0
    circles = [e for e in panel.iter(SVG + "circle") if classes(e)[:1] == ["residual"]]
    beyond = sum(subpaths(e.get("d")) for e in panel.iter(SVG + "path") if classes(e)[:1] == ["residual"])
    return len(circles) + beyond


def read_csv(data):
    lines = data.decode("utf-8").split("\n")
    comments = [line for line in lines if line.startswith("#")]
    rows = list(csv.reader(io.StringIO("\n".join(line for line in lines if line and not line.startswith("#")))))
    return comments, rows


def fit_outputs(name, path, flags=()):
    """(JSON document, SVG bytes, CSV bytes) of one input, or None; checks the flags' behaviour."""
    with tempfile.TemporaryDirectory(prefix="planckton-plot-") as work:
        svg_path = os.path.join(work, "fit.svg")
        code, plain, err = run(["fit", path, *flags])
        code_plot, out, err_plot = run(["fit", path, *flags, "--plot", svg_path])
        ok = code == 0 and code_plot == 0 and os.path.exists(svg_path)
        checks.check(f"{name}: --plot writes the SVG and exits 0", ok, (err + err_plot).strip()[:300])
        if not ok:
            return None
        doc = json.loads(plain)
        checks.check(f"{name}: --plot still prints the same JSON document", json.loads(out) == doc)
        code, explicit, _ = run(["fit", path, *flags, "--output", "json"])
        checks.check(f"{name}: --output json prints the same document", code == 0 and json.loads(explicit) == doc)
        with open(svg_path, "rb") as f:
            svg = f.read()
        code, printed, err = run(["fit", path, *flags, "--output", "svg"])
        checks.check(f"{name}: --output svg prints the bytes --plot writes", code == 0 and printed == svg, err.strip()[:200])
        code, again, _ = run(["fit", path, *flags, "--output", "svg"])
        checks.check(f"{name}: deterministic (the same input gives the same bytes)", again == printed)
        code, table, err = run(["fit", path, *flags, "--output", "csv"])
        checks.check(f"{name}: --output csv exits 0", code == 0 and table, err.strip()[:200])
        return doc, svg, table


def spectra(truth):
    for sample in truth["samples"]:
        name = sample["name"]
        with open(os.path.join(args.samples, sample["json"]), encoding="utf-8") as f:
            request = json.load(f)["spectrum"]
        outputs = fit_outputs(name, os.path.join(args.samples, sample["json"]))
        if outputs is None:
            continue
        doc, svg, table = outputs
        xs, ys, errors = request["x"], request["y"], request.get("y_error")
        ranges = request.get("exclude", [])
        excluded = [any(lo <= x <= hi for lo, hi in ranges) for x in xs]
        root = parse_svg(name, svg)
        if root is not None:
            panel = check_common(name, root, svg, doc)
            points = find_all(root, "circle", "point")
            hollow = find_all(root, "circle", "point", "excluded")
            checks.check(f"{name}: one marker per point ({len(xs)})", len(points) + len(hollow) == len(xs),
                         f"{len(points)} + {len(hollow)} excluded")
            checks.check(f"{name}: the excluded points drawn hollow ({sum(excluded)})", len(hollow) == sum(excluded),
                         f"{len(hollow)}")
            shaded = find_all(root, "rect", "excluded-range")
            checks.check(f"{name}: each excluded range shaded ({len(ranges)})", len(shaded) == len(ranges), f"{len(shaded)}")
            bars = find_all(root, "path", "error-bars")
            if errors:
                checks.check(f"{name}: an error bar per point", len(bars) == 1 and subpaths(bars[0].get("d")) == len(xs),
                             f"{subpaths(bars[0].get('d')) if bars else 0} bars")
            else:
                checks.check(f"{name}: no error bars without y_error", not bars)
            checks.check(f"{name}: a residual per point", residual_marks(panel) == len(xs), f"{residual_marks(panel)}")
            x_label, y_label = axis_label(root, "x"), axis_label(root, "y")
            checks.check(f"{name}: the x axis label names {sample['x_unit']}", f"({request['x_unit']})" in x_label, x_label)
            checks.check(f"{name}: the y axis label names {sample['y_unit']}", request["y_unit"] + ")" in y_label, y_label)
            want_x = "log" if spans_decades(xs) else "linear"
            want_y = "log" if spans_decades(ys) else "linear"
            got = (axis(root, "x").get("data-scale"), axis(root, "y").get("data-scale"))
            checks.check(f"{name}: axes {want_x} x, {want_y} y (log beyond 1.5 decades)", got == (want_x, want_y), got)

        comments, rows = read_csv(table)
        header = rows[0] if rows else []
        checks.check(f"{name}: CSV header x,y,y_error,model,residual,excluded",
                     header == ["x", "y", "y_error", "model", "residual", "excluded"], header)
        checks.check(f"{name}: CSV has one row per point", len(rows) == len(xs) + 1, f"{len(rows) - 1} rows")
        checks.check(f"{name}: CSV comments name the temperature, the units, the model and the line ends",
                     any("temperature" in c for c in comments) and any(request["y_unit"] in c for c in comments)
                     and any("fitted curve" in c for c in comments) and any("not CRLF" in c for c in comments))
        checks.check(f"{name}: CSV lines end with LF only", b"\r" not in table)
        t = doc["parameters"]["temperature"]["value"]
        scale = doc["parameters"]["scale"]["value"]
        worst, bad_residual, bad_flag, bad_data = 0.0, 0, 0, 0
        for i, row in enumerate(rows[1:len(xs) + 1]):
            x, y, model, residual = float(row[0]), float(row[1]), float(row[3]), float(row[4])
            expected = planck_model(x, request["x_unit"], request["y_unit"], t, scale)
            worst = max(worst, abs(model - expected) / abs(expected))
            want_residual = (y - model) / float(row[2]) if errors else y - model
            bad_residual += abs(residual - want_residual) > 1e-9 * max(abs(want_residual), abs(y - model) / abs(y) if y else 1.0)
            bad_flag += row[5] != ("1" if excluded[i] else "0")
            bad_data += (x != xs[i] or y != ys[i] or (errors and float(row[2]) != errors[i]) or (not errors and row[2] != ""))
        checks.check(f"{name}: CSV model = Planck's law at the JSON T and scale within 1e-9", worst <= 1e-9, f"worst {worst:.2e}")
        checks.check(f"{name}: CSV residual = " + ("(y - model) / y_error" if errors else "y - model"), bad_residual == 0,
                     f"{bad_residual} rows differ")
        checks.check(f"{name}: CSV excluded column marks the exclude ranges", bad_flag == 0, f"{bad_flag} rows differ")
        checks.check(f"{name}: CSV x, y, y_error are the request's own numbers", bad_data == 0, f"{bad_data} rows differ")

        # The CSV table with the README's flags and the request's exclude ranges, loss and distance.
        flags = sample["cli_flags"].split()
        for lo, hi in sample.get("exclude", []):
            flags += ["--exclude", f"{lo}:{hi}"]
        options = sample.get("options", {})
        if "loss" in options:
            flags += ["--loss", options["loss"]["kind"], "--loss-scale", str(options["loss"]["scale"])]
        if "distance" in options:
            flags += ["--distance", f"{options['distance']['value']} {options['distance']['unit']}"]
        table_outputs = fit_outputs(f"{name} (CSV table)", os.path.join(args.samples, sample["csv"]), flags)
        if table_outputs is not None:
            table_doc, table_svg, table_csv = table_outputs
            checks.check(f"{name}: the table gives the JSON request's document", table_doc == doc)
            checks.check(f"{name}: the table gives the JSON request's SVG", table_svg == svg)
            checks.check(f"{name}: the table gives the JSON request's CSV", table_csv == table)
            if sample.get("exclude"):
                troot = parse_svg(f"{name} (CSV table)", table_svg)
                shaded = find_all(troot, "rect", "excluded-range") if troot is not None else []
                checks.check(f"{name} (CSV table, --exclude): the excluded ranges are shaded",
                             len(shaded) == len(sample["exclude"]), f"{len(shaded)}")


def photometry(truth):
    for sample in truth.get("photometry_samples", []):
        name = sample["name"]
        with open(os.path.join(args.samples, sample["json"]), encoding="utf-8") as f:
            measurements = json.load(f)["photometry"]
        outputs = fit_outputs(name, os.path.join(args.samples, sample["json"]))
        if outputs is None:
            continue
        doc, svg, table = outputs
        n = len(measurements)
        limits = [m for m in measurements if m.get("upper_limit")]
        root = parse_svg(name, svg)
        if root is not None:
            panel = check_common(name, root, svg, doc)
            points = find_all(root, "circle", "point")
            arrows = find_all(root, "path", "upper-limit")
            checks.check(f"{name}: one marker per band ({n})", len(points) + len(arrows) == n, f"{len(points)} + {len(arrows)}")
            checks.check(f"{name}: upper limits drawn as arrows ({len(limits)})", len(arrows) == len(limits)
                         and all(subpaths(a.get("d")) >= 3 for a in arrows), f"{len(arrows)}")
            if sample["name"] == "bfc-3-cold-clump":
                checks.check(f"{name}: the MIPS 70 um non-detection is the arrow",
                             [a.get("data-band") for a in arrows] == ["mips-70"], [a.get("data-band") for a in arrows])
            widths = find_all(root, "path", "band-width")
            checks.check(f"{name}: a band-width bar per band", len(widths) == 1 and subpaths(widths[0].get("d")) == n)
            bars = find_all(root, "path", "error-bars")
            detections = n - len(limits)
            checks.check(f"{name}: an error bar per detection ({detections})",
                         len(bars) == 1 and subpaths(bars[0].get("d")) == detections)
            squares = find_all(root, "rect", "model-value")
            checks.check(f"{name}: the model's band values as open markers", len(squares) == n
                         and all(s.get("fill") == "none" for s in squares), f"{len(squares)}")
            checks.check(f"{name}: a residual per band", residual_marks(panel) == n, f"{residual_marks(panel)}")
            got = (axis(root, "x").get("data-scale"), axis(root, "y").get("data-scale"))
            checks.check(f"{name}: log-log axes", got == ("log", "log"), got)
            x_label, y_label = axis_label(root, "x"), axis_label(root, "y")
            checks.check(f"{name}: axis labels name the units (um, Jy)", "(\u00b5m)" in x_label and "(Jy)" in y_label,
                         f"{x_label} | {y_label}")
        comments, rows = read_csv(table)
        checks.check(f"{name}: CSV header band,pivot_wavelength_nm,unit,value,error,upper_limit,model,residual",
                     rows[:1] == [["band", "pivot_wavelength_nm", "unit", "value", "error", "upper_limit", "model", "residual"]])
        checks.check(f"{name}: CSV has one row per band", len(rows) == n + 1, f"{len(rows) - 1}")
        same = all(row[0] == b["band"] and float(row[1]) == b["pivot_wavelength_nm"] and row[2] == b["unit"]
                   and float(row[3]) == b["value"] and float(row[6]) == b["model"] and float(row[7]) == b["residual"]
                   and row[5] == ("1" if b["upper_limit"] else "0")
                   for row, b in zip(rows[1:], doc["bands"]))
        checks.check(f"{name}: CSV rows are the JSON response's bands (model exact)", same)
        if sample.get("csv"):
            flags = ["--distance", f"{sample['options']['distance']['value']} {sample['options']['distance']['unit']}"] \
                if "distance" in sample.get("options", {}) else []
            table_outputs = fit_outputs(f"{name} (CSV table)", os.path.join(args.samples, sample["csv"]), flags)
            if table_outputs is not None:
                checks.check(f"{name}: the photometry table gives the JSON request's SVG and CSV",
                             table_outputs[1] == svg and table_outputs[2] == table)


def bad_flags():
    path = os.path.join(args.samples, "tms-0112-cool-star.json")
    code, out, err = run(["fit", path, "--output", "png"])
    checks.check("--output png: exit 2, nothing printed", code == 2 and not out, err.strip()[:200])
    code, out, err = run(["fit", path, "--plot", "/nonexistent-directory/fit.svg"])
    checks.check("--plot into a missing directory: exit 2 and says so", code == 2 and not out and "cannot write" in err,
                 err.strip()[:200])


with open(os.path.join(args.samples, "truth.json"), encoding="utf-8") as f:
    TRUTH = json.load(f)
spectra(TRUTH)
photometry(TRUTH)
bad_flags()
checks.finish()
