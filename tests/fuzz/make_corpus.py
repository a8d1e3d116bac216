#!/usr/bin/python3
"""Writes the seed corpora of the fuzz targets into tests/fuzz/corpus/<target>/.

Seeds come from the samples (sample-spectra/, shortened to a few points: a fuzzer mutates small
inputs faster, and the structure is what matters) and from documents written here for what the
samples do not show (each model kind, extinction laws, parameter control, posterior options,
inline curves, table dialects, FITS layouts). Run again after a format gains a member; files found by
fuzzing (regressions) are kept under their own names and never overwritten. The FITS seeds are
written with Debian's python3-astropy.

    /usr/bin/python3 tests/fuzz/make_corpus.py
"""
import io
import json
import pathlib
import sys

import numpy as np
from astropy.io import fits

HERE = pathlib.Path(__file__).resolve().parent
REPO = HERE.parent.parent
SAMPLES = REPO / "sample-spectra"
CORPUS = HERE / "corpus"
KEEP = 12  # points kept of a sample's arrays


def write(target, name, data):
    directory = CORPUS / target
    directory.mkdir(parents=True, exist_ok=True)
    if isinstance(data, str):
        data = data.encode()
    (directory / name).write_bytes(data)


def compact(document):
    return json.dumps(document, separators=(",", ":"))


def shorten(value):
    """Arrays of numbers cut to KEEP entries, recursively; inline curves keep their shape."""
    if isinstance(value, list):
        if value and all(isinstance(v, (int, float)) for v in value):
            if len(value) <= KEEP:
                return value
            step = max(1, len(value) // KEEP)
            return value[::step][:KEEP]
        return [shorten(v) for v in value[:KEEP]]
    if isinstance(value, dict):
        return {k: shorten(v) for k, v in value.items()}
    return value


def samples():
    for path in sorted(SAMPLES.glob("*.json")):
        if path.name == "truth.json":
            continue
        yield path.stem, shorten(json.loads(path.read_text()))


SPECTRUM = {"x": [400, 500, 600, 700, 800], "x_unit": "nm", "y": [1.1, 1.6, 1.7, 1.5, 1.2], "y_unit": "W/m2/nm",
            "y_error": [0.05, 0.05, 0.05, 0.05, 0.05]}
MODELS = {
    "planck": {"kind": "planck"},
    "diluted-angular": {"kind": "diluted_planck", "angular_radius": {"value": 0.05, "unit": "mas", "error": 0.002}},
    "diluted-radius": {"kind": "diluted_planck", "radius": {"value": 6.9e8, "unit": "m", "error": 1e7}},
    "mbb-thin": {"kind": "modified_black_body", "opacity": "thin", "reference_frequency": {"value": 1, "unit": "THz"}},
    "mbb-general": {"kind": "modified_black_body", "opacity": "general",
                    "parameters": {"beta": {"prior": {"mean": 1.8, "sigma": 0.2}}}},
    "mbb-dust": {"kind": "modified_black_body", "opacity": "thin",
                 "dust_opacity": {"value": 0.1, "unit": "m2/kg", "at": {"value": 250, "unit": "um"}}},
    "two-temperature": {"kind": "two_temperature",
                        "parameters": {"temperature_1": {"bounds": [3000, 8000], "initial": 5000},
                                       "temperature_2": {"fixed": 1200}}},
    "extinction-ccm": {"kind": "planck", "extinction": {"law": "cardelli1989", "r_v": 3.1, "frame": "observed"}},
    "extinction-odonnell": {"kind": "planck", "extinction": {"law": "odonnell1994"}},
    "extinction-f99-rest": {"kind": "planck", "extinction": {"law": "fitzpatrick1999", "frame": "rest"}, "redshift": 0.5},
    "extinction-calzetti": {"kind": "planck", "extinction": {"law": "calzetti2000", "r_v": 4.05},
                            "parameters": {"color_excess": {"bounds": [0, 1]}}},
    "redshift": {"kind": "planck", "redshift": 0.02, "parameters": {"temperature": {"initial": 6000},
                                                                      "scale": {"bounds": [1e-30, 1e-10]}}},
}
OPTIONS = {
    "bounds-loss": {"temperature_bounds": [1000, 20000], "loss": {"kind": "huber", "scale": 1.5}, "max_iterations": 50},
    "cauchy-distance": {"loss": {"kind": "cauchy"}, "distance": {"value": 120, "unit": "pc", "error": 5},
                        "time_budget_seconds": 2},
    "profile": {"intervals": "profile"},
    "posterior": {"intervals": "posterior", "seed": 7,
                  "posterior": {"walkers": 8, "steps": 40, "burn_in": 10, "samples": 5, "prior": "flat"}},
}
CURVES = {
    "nm-photon": {"id": "lab-filter-7", "wavelength": [500, 510, 520, 530, 540], "wavelength_unit": "nm",
                  "response": [0, 0.4, 1, 0.5, 0], "detector": "photon_counting"},
    "um-energy": {"id": "ir-23", "wavelength": [2.0, 2.1, 2.2, 2.3, 2.4, 2.5], "wavelength_unit": "um",
                  "response": [0.0, 0.3, 0.9, 1.0, 0.2, 0.0], "detector": "energy_integrating"},
    "ghz-decreasing": {"id": "mm-band", "wavelength": [400, 350, 300, 250], "wavelength_unit": "GHz",
                       "response": [0.1, 1, 1, 0.1], "detector": "energy_integrating"},
    "angstrom": {"id": "u-like", "wavelength": [3000, 3200, 3400, 3600, 3800, 4000], "wavelength_unit": "Angstrom",
                 "response": [0, 0.2, 0.8, 0.9, 0.3, 0], "detector": "photon_counting"},
    "wavenumber": {"id": "ftir", "wavelength": [2000, 2100, 2200, 2300], "wavelength_unit": "cm-1",
                   "response": [0.2, 1, 1, 0.2], "detector": "energy_integrating"},
}
PHOTOMETRY = [
    {"band": "2mass-j", "value": 9.68, "error": 0.02, "unit": "Vegamag"},
    {"band": "2mass-ks", "value": 9.1, "error": 0.03, "unit": "Vegamag", "zero_point": {"value": 666.7, "unit": "Jy"}},
    {"band": "wise-w1", "value": 12.0, "error": 0.5, "unit": "mJy", "upper_limit": True},
    {"band": "irac-3.6", "value": 8.1, "error": 0.3, "unit": "mJy",
     "quoted": {"kind": "monochromatic", "wavelength": 3.55, "wavelength_unit": "um",
                "reference": {"kind": "power_law", "power_law_index": -1}}},
    {"band": "sdss-g", "value": 10.2, "error": 0.02, "unit": "ABmag", "systematic_error": 0.03,
     "quoted": {"kind": "band_average"}},
    {"band": "pacs-100", "value": 1.2, "error": 0.1, "unit": "Jy",
     "quoted": {"kind": "monochromatic", "wavelength": 100, "wavelength_unit": "um",
                "reference": {"kind": "black_body", "temperature": 10000}}},
    {"band": CURVES["nm-photon"], "value": 3e-15, "error": 2e-16, "unit": "erg/s/cm2/Angstrom"},
]
UNITS = ["nm", "um", "Angstrom", "AA", "mm", "m", "micron", "Hz", "kHz", "MHz", "GHz", "THz", "cm-1", "eV", "keV",
         "erg/s/cm2/Angstrom", "erg/s/cm2/nm", "W/m2/nm", "W/m2/um", "W/m2/Hz", "erg/s/cm2/Hz", "Jy", "mJy", "uJy",
         "photon/s/cm2/Angstrom", "W/m2/sr/nm", "W/m2/sr/um", "W/m2/sr/Hz", "MJy/sr", "Jy/sr", "relative/nm",
         "erg.s**-1.cm**-2.Angstrom**-1", "W.m**-2.sr**-1.nm**-1", "W m^-2 um^-1", "ph/s/m2/um", "m^-1",
         "pc", "kpc", "Mpc", "au", "ly", "km"]
ACCEPT = ["application/json", "image/svg+xml;q=0.9, */*;q=0.1", "text/csv", "text/*;q=0.5, application/json;q=0.4",
          "*/*", "image/*", "application/xml", "text/csv;q=0", "svg\nimage/svg+xml", "csv\n", "json\ntext/html, */*;q=0.01",
          "application/json; charset=utf-8; q=1.0", "image/svg+xml;level=1;q=0.7,text/csv;q=0.7"]


def json_seeds():
    for name, document in samples():
        write("fit_request", f"sample-{name}.json", compact(document))
        if "model" in document:
            write("model_member", f"sample-{name}.json", compact(document["model"]))
        if "photometry" in document:
            write("photometry", f"sample-{name}.json", compact(document["photometry"]))
            for i, m in enumerate(document["photometry"]):
                if isinstance(m["band"], dict):
                    write("inline_passband", f"sample-{name}-{i}.json", compact(m["band"]))
        if "spectrum" in document and not name.startswith("tms-"):
            write("lab", f"sample-{name}.json", compact(document))
    for name, model in MODELS.items():
        write("model_member", f"{name}.json", compact(model))
        write("fit_request", f"model-{name}.json", compact({"spectrum": SPECTRUM, "model": model}))
    for name, options in OPTIONS.items():
        write("fit_request", f"options-{name}.json", compact({"id": name, "spectrum": SPECTRUM, "options": options}))
    write("fit_request", "exclude-id-integer.json",
          compact({"id": 42, "spectrum": dict(SPECTRUM, exclude=[[640, 660]])}))
    write("fit_request", "photometry-mixed.json",
          compact({"photometry": PHOTOMETRY, "options": {"systematic_error": 0.02}}))
    write("photometry", "mixed.json", compact(PHOTOMETRY))
    for name, curve in CURVES.items():
        write("inline_passband", f"{name}.json", compact(curve))
    for i, unit in enumerate(UNITS):
        write("units", f"unit-{i:02d}", unit)
    for i, accept in enumerate(ACCEPT):
        write("accept", f"accept-{i:02d}", accept)
    lamp = {"spectrum": {"x": [380, 430, 480, 530, 580, 630, 680, 730, 780], "x_unit": "nm",
                         "y": [0.2, 0.35, 0.5, 0.65, 0.8, 0.9, 1.0, 1.05, 1.1], "y_unit": "relative/nm"}}
    write("lab", "light-lamp-observer.json", compact(dict(lamp, id="lamp-1", observer="cie1964_10deg")))
    hot = {"spectrum": {"x": [0.9, 1.0, 1.1, 1.2, 1.3, 1.4], "x_unit": "um",
                        "y": [3.1e9, 3.9e9, 4.4e9, 4.7e9, 4.8e9, 4.7e9], "y_unit": "W/m2/sr/um"},
           "emissivity": "linear", "radiance_temperature_at": [1.05], "ratio_pair": [0.95, 1.25],
           "options": {"temperature_bounds": [500, 4000]}}
    write("lab", "hot-body-linear.json", compact(hot))
    lines = (SAMPLES / "batch.ndjson").read_text().splitlines()
    short = [compact(shorten(json.loads(line))) for line in lines if line.strip()]
    write("batch", "sample-batch.ndjson", "\n".join(short[:4]) + "\n")
    write("batch", "blank-lines-crlf.ndjson", "\r\n" + short[0] + "\r\n \n" + "{\"id\":\"x\",\"spectrum\":1}\n" + "not json\n")
    write("batch", "photometry-and-options.ndjson",
          compact({"id": 3, "photometry": PHOTOMETRY[:2]}) + "\n" +
          compact({"spectrum": SPECTRUM, "model": MODELS["mbb-thin"], "options": OPTIONS["profile"]}) + "\n")


def table_seeds():
    units = {"ql3-bench-lamp": ("nm", "W/m2/sr/nm"), "tms-0047-hot-star": ("nm", "erg/s/cm2/Angstrom"),
             "tms-0112-cool-star": ("um", "W/m2/um"), "tms-0203-sunlike-star": ("nm", "erg/s/cm2/Angstrom"),
             "tms-0351-reddened-star": ("nm", "erg/s/cm2/Angstrom")}
    for path in sorted(SAMPLES.glob("*.csv")):
        text = path.read_text().splitlines()
        comments = [line for line in text if line.startswith("#")]
        rows = [line for line in text if not line.startswith("#")]
        body = "\n".join(comments[:1] + rows[:KEEP + 1]) + "\n"
        if path.stem in units:
            x, y = units[path.stem]
            write("table", f"sample-{path.stem}.csv", f"?x_unit={x}&y_unit={y}\n" + body)
        else:
            write("table", f"sample-{path.stem}.csv", "?systematic_error=0.02\n" + body)
    write("table", "whitespace-no-header.txt",
          "?x_unit=um&y_unit=Jy&model=modified_black_body&opacity=thin&fix=beta:1.8\n"
          "# lambda flux err\n100 1.2 0.1\n160 2.5 0.2\n250 2.9 0.2\n350 2.1 0.2\n500 1.1 0.1\n")
    write("table", "tsv-columns-by-index.tsv",
          "?x_unit=nm&y_unit=W%2Fm2%2Fnm&x_column=2&y_column=3&error_column=none&format=csv\n"
          "id\twave\tflux\n1\t400\t1.1\n2\t500\t1.6\n3\t600\t1.7\n4\t700\t1.5\n")
    write("table", "semicolon-options.csv",
          "?x_unit=nm&y_unit=W/m2/nm&loss=huber&loss_scale=2&exclude=640:660&exclude=700:710&distance=120%20pc"
          "&temperature_min=1000&temperature_max=20000&time_budget_seconds=1&extinction=cardelli1989&r_v=3.1"
          "&redshift=0.01\nx;y;sigma\n400;1.1;0.05\n500;1.6;0.05\n600;1.7;0.05\n650;9.9;0.05\n700;1.5;0.05\n")
    write("table", "posterior-format-svg.csv",
          "?x_unit=GHz&y_unit=MJy/sr&intervals=posterior&seed=3&format=svg\nx,y,y_error\n600,10,1\n857,20,2\n"
          "1200,25,2\n1875,20,2\n3000,12,1\n")
    write("table", "photometry-upper-limits.csv",
          "?model=diluted_planck&intervals=profile\nband,value,error,unit,upper_limit,zero_point,systematic_error\n"
          "2mass-j,9.68,0.02,Vegamag,no,,0.01\n2mass-h,9.3,0.03,Vegamag,false,1024,-\nwise-w1,12,0.5,mJy,yes,,\n")


def fits_bytes(hdus):
    buffer = io.BytesIO()
    fits.HDUList(hdus).writeto(buffer)
    return buffer.getvalue()


def fits_seeds():
    n = 8
    wave = np.linspace(400.0, 900.0, n)
    flux = 1e-15 * (1.0 + 0.1 * np.sin(wave / 50.0))
    err = 0.03 * flux
    for path in sorted(SAMPLES.glob("*.fits")):
        if path.stat().st_size <= 9000:
            write("fits", f"sample-{path.stem}.fits", path.read_bytes())
    # An image with a linear WCS and an ERR extension.
    primary = fits.PrimaryHDU(flux.astype(np.float32))
    h = primary.header
    h["CTYPE1"], h["CRVAL1"], h["CDELT1"], h["CRPIX1"], h["CUNIT1"] = "WAVE", 400.0, 500.0 / (n - 1), 1.0, "nm"
    h["BUNIT"] = "erg/s/cm2/Angstrom"
    error = fits.ImageHDU(err.astype(np.float32), name="ERR")
    error.header["BUNIT"] = "erg/s/cm2/Angstrom"
    write("fits", "image-wave-err.fits", fits_bytes([primary, error]))
    # A log-spaced air-wavelength image with an inverse-variance extension, units with a scale factor.
    primary = fits.PrimaryHDU((flux * 1e17).astype(np.float64))
    h = primary.header
    h["CTYPE1"], h["CRVAL1"], h["CD1_1"], h["CRPIX1"], h["CUNIT1"] = "AWAV-LOG", 5000.0, 12.0, 1.0, "Angstrom"
    h["BUNIT"] = "1E-17 erg/(s cm2 Angstrom)"
    write("fits", "image-awav-log-ivar.fits",
          fits_bytes([primary, fits.ImageHDU(1.0 / (err * 1e17) ** 2, name="IVAR")]))
    # IRAF style: LINEAR with DC-FLAG, BSCALE/BZERO integers and a BLANK pixel, 2-D with a length-1 axis.
    data = np.round(flux / flux.max() * 30000).astype(np.int16).reshape(1, n)
    data[0, 3] = -32768
    primary = fits.PrimaryHDU(data)
    h = primary.header
    h["CTYPE1"], h["CRVAL1"], h["CDELT1"], h["DC-FLAG"], h["CUNIT1"] = "LINEAR", 3.6, 0.02, 1, "Angstrom"
    h["BLANK"], h["BSCALE"], h["BZERO"], h["BUNIT"] = -32768, 1e-19, 0.0, "W/m2/nm"
    write("fits", "image-iraf-dcflag-int16.fits", fits_bytes([primary]))
    # A frequency image in a named extension after an empty primary.
    image = fits.ImageHDU(np.array([10.0, 20.0, 25.0, 20.0, 12.0]), name="SPECTRUM")
    image.header["CTYPE1"], image.header["CRVAL1"], image.header["CDELT1"] = "FREQ", 6e11, 3e11
    image.header["BUNIT"] = "MJy/sr"
    write("fits", "extension-freq.fits", fits_bytes([fits.PrimaryHDU(), image]))
    # Binary tables: one row per point, and one row of arrays (loglam, as SDSS gives it).
    rows = fits.BinTableHDU.from_columns([
        fits.Column(name="WAVELENGTH", format="D", unit="um", array=wave / 1000.0),
        fits.Column(name="FLUX", format="E", unit="W/m2/um", array=flux * 10.0),
        fits.Column(name="ERR", format="E", unit="W/m2/um", array=err * 10.0)], name="SPEC")
    write("fits", "table-rows.fits", fits_bytes([fits.PrimaryHDU(), rows]))
    arrays = fits.BinTableHDU.from_columns([
        fits.Column(name="loglam", format=f"{n}E", array=[np.log10(wave * 10.0)]),
        fits.Column(name="flux", format=f"{n}E", unit="1E-17 erg/s/cm2/Angstrom", array=[flux * 1e17]),
        fits.Column(name="ivar", format=f"{n}E", array=[1.0 / (err * 1e17) ** 2])])
    write("fits", "table-arrays-loglam.fits", fits_bytes([fits.PrimaryHDU(), arrays]))
    # Band measurements, with a logical upper-limit column.
    bands = fits.BinTableHDU.from_columns([
        fits.Column(name="BAND", format="10A", array=["2mass-j", "2mass-h", "wise-w1"]),
        fits.Column(name="VALUE", format="D", array=[9.68, 9.3, 12.0]),
        fits.Column(name="ERROR", format="D", array=[0.02, 0.03, 0.5]),
        fits.Column(name="UNIT", format="8A", array=["Vegamag", "Vegamag", "mJy"]),
        fits.Column(name="UPPER_LIMIT", format="L", array=[False, False, True])])
    write("fits", "table-photometry.fits", fits_bytes([fits.PrimaryHDU(), bands]))
    # An ASCII table, and query lines choosing HDU, columns and units.
    ascii_table = fits.TableHDU.from_columns([
        fits.Column(name="x", format="F10.3", array=wave), fits.Column(name="y", format="E15.7", array=flux)])
    write("fits", "ascii-table-query.fits",
          b"?hdu=1&x_unit=nm&y_unit=erg/s/cm2/Angstrom&error_column=none&model=planck\n" +
          fits_bytes([fits.PrimaryHDU(), ascii_table]))
    write("fits", "query-columns.fits", b"?x_column=1&y_column=FLUX&hdu=spec&intervals=profile\n" +
          fits_bytes([fits.PrimaryHDU(), rows]))


def main():
    json_seeds()
    table_seeds()
    fits_seeds()
    for directory in sorted(CORPUS.iterdir()):
        print(f"{directory.name}: {len(list(directory.iterdir()))} seeds")
    return 0


if __name__ == "__main__":
    sys.exit(main())
