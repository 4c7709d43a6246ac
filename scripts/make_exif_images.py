#!/usr/bin/env python3
"""Make small test images with chosen EXIF focal tags and record exiftool's reading of them.

Writes fixtures/exif/*.{jpg,png,tif} and fixtures/exif/exiftool_reading.json. The base images
are drawn with opencv-python-headless (PyPI); the EXIF tags are written and read back by
exiftool (Debian package libimage-exiftool-perl). `cargo test` only reads the committed output.

Usage (from the repository root):  python3 scripts/make_exif_images.py

The tag values are invented for this fixture set, except case `cm` (and `inch`, `resized`,
`zoom2`), which is the CHECK_VALUES worked example (4000 x 2950 px on a 6.17 x 4.55 mm sensor,
f = 4.5 mm) scaled down ten times to 400 x 295 px stored pixels.
"""

import json
import os
import subprocess
import sys

import cv2
import numpy as np

OUT_DIR = os.path.join("fixtures", "exif")
SCRIPT = "scripts/make_exif_images.py"

# Tags read back, in exiftool's names (exiftool calls PixelXDimension "ExifImageWidth" and
# FocalLengthIn35mmFilm "FocalLengthIn35mmFormat"). The composites FocalLength35efl and
# ScaleFactor35efl are exiftool's own focal-plane computation, used as a cross-check.
READ_TAGS = [
    "FileType",
    "ImageWidth",
    "ImageHeight",
    "ExifImageWidth",
    "ExifImageHeight",
    "FocalLength",
    "FocalPlaneXResolution",
    "FocalPlaneYResolution",
    "FocalPlaneResolutionUnit",
    "FocalLengthIn35mmFormat",
    "DigitalZoomRatio",
    "ScaleFactor35efl",
    "FocalLength35efl",
]

# The worked example scaled to 400 x 295 stored pixels: sensor 6.17 x 4.55 mm, f = 4.5 mm.
EX_W, EX_H = 400, 295
EX_SENSOR_W_MM, EX_SENSOR_H_MM = 6.17, 4.55
EX_RES_X_PER_CM = EX_W / (EX_SENSOR_W_MM / 10.0)
EX_RES_Y_PER_CM = EX_H / (EX_SENSOR_H_MM / 10.0)
EX_RES_X_PER_IN = EX_W / (EX_SENSOR_W_MM / 25.4)
EX_RES_Y_PER_IN = EX_H / (EX_SENSOR_H_MM / 25.4)


def fmt(x):
    """A value as exiftool should write it (rationals get 10 significant digits)."""
    return f"{x:.10g}"


EXAMPLE_CM = {
    "FocalLength": "4.5",
    "FocalPlaneXResolution": fmt(EX_RES_X_PER_CM),
    "FocalPlaneYResolution": fmt(EX_RES_Y_PER_CM),
    "FocalPlaneResolutionUnit": "3",
    "ExifImageWidth": str(EX_W),
    "ExifImageHeight": str(EX_H),
}

EXAMPLE_INCH = dict(
    EXAMPLE_CM,
    FocalPlaneXResolution=fmt(EX_RES_X_PER_IN),
    FocalPlaneYResolution=fmt(EX_RES_Y_PER_IN),
    FocalPlaneResolutionUnit="2",
)

EXAMPLE_NO_UNIT = {k: v for k, v in EXAMPLE_INCH.items() if k != "FocalPlaneResolutionUnit"}

# Sensor-native density (4000 x 2950 px grid) in a file resampled to 400 x 295 px.
EXAMPLE_RESIZED = dict(
    EXAMPLE_CM,
    FocalPlaneXResolution=fmt(10 * EX_RES_X_PER_CM),
    FocalPlaneYResolution=fmt(10 * EX_RES_Y_PER_CM),
    ExifImageWidth="4000",
    ExifImageHeight="2950",
)

# (file name, size (w, h), tags to write, what the case checks)
CASES = [
    ("cm.jpg", (EX_W, EX_H), EXAMPLE_CM, "FocalPlaneResolutionUnit 3 (cm)"),
    ("inch.jpg", (EX_W, EX_H), EXAMPLE_INCH, "FocalPlaneResolutionUnit 2 (inch)"),
    ("no_unit.jpg", (EX_W, EX_H), EXAMPLE_NO_UNIT, "unit missing: EXIF default inch"),
    ("resized.jpg", (EX_W, EX_H), EXAMPLE_RESIZED, "stored image smaller than PixelXDimension"),
    ("f35_only.jpg", (EX_W, EX_H), {"FocalLengthIn35mmFormat": "25"}, "35 mm equivalent only"),
    (
        "f35_with_focal.jpg",
        (EX_W, EX_H),
        {"FocalLength": "4.5", "FocalLengthIn35mmFormat": "25"},
        "FocalLength without focal-plane density: 35 mm fallback",
    ),
    (
        "no_focal.jpg",
        (EX_W, EX_H),
        {"Make": "Larkspur Optics", "Model": "LK-7", "ExifImageWidth": "400"},
        "no focal tags: error",
    ),
    ("zoom2.jpg", (EX_W, EX_H), dict(EXAMPLE_CM, DigitalZoomRatio="2"), "DigitalZoomRatio 2"),
    (
        "bad_rational.jpg",
        (EX_W, EX_H),
        dict(EXAMPLE_CM, FocalLength="undef"),
        "FocalLength 0/0: error",
    ),
    # 80 x 60 px on a 4.8 x 3.6 mm sensor (60 um pixels), f = 3.6 mm, unit 4 (mm).
    (
        "mm.png",
        (80, 60),
        {
            "FocalLength": "3.6",
            "FocalPlaneXResolution": fmt(80 / 4.8),
            "FocalPlaneYResolution": fmt(60 / 3.6),
            "FocalPlaneResolutionUnit": "4",
            "ExifImageWidth": "80",
            "ExifImageHeight": "60",
        },
        "PNG eXIf chunk, FocalPlaneResolutionUnit 4 (mm)",
    ),
    # 160 x 120 px with 25 um pixels (4.0 x 3.0 mm), f = 4.0 mm, unit 5 (um).
    (
        "um.tif",
        (160, 120),
        {
            "FocalLength": "4",
            "FocalPlaneXResolution": "0.04",
            "FocalPlaneYResolution": "0.04",
            "FocalPlaneResolutionUnit": "5",
            "ExifImageWidth": "160",
            "ExifImageHeight": "120",
        },
        "TIFF, FocalPlaneResolutionUnit 5 (um)",
    ),
    ("no_exif.jpg", (64, 48), None, "JPEG without EXIF: error"),
]


def base_image(width, height):
    """A smooth colour ramp with a few shapes: compresses to a few KB."""
    x = np.linspace(0, 255, width, dtype=np.float32)
    y = np.linspace(0, 255, height, dtype=np.float32)
    img = np.zeros((height, width, 3), dtype=np.uint8)
    img[..., 0] = x[None, :]
    img[..., 1] = y[:, None]
    img[..., 2] = 128
    cv2.circle(img, (width // 3, height // 2), min(width, height) // 5, (20, 20, 220), -1)
    cv2.rectangle(img, (width // 2, height // 4), (3 * width // 4, height // 2), (240, 240, 240), 2)
    return img


def write_base(path, size):
    params = [cv2.IMWRITE_JPEG_QUALITY, 60] if path.endswith(".jpg") else []
    if not cv2.imwrite(path, base_image(*size), params):
        sys.exit(f"opencv could not write {path}")


def write_tags(path, tags):
    # Make and Model belong to IFD0; every focal tag to the Exif sub-IFD.
    group = {"Make": "IFD0", "Model": "IFD0"}
    args = [f"-{group.get(k, 'ExifIFD')}:{k}={v}" for k, v in tags.items()]
    subprocess.run(["exiftool", "-q", "-overwrite_original", "-n", *args, path], check=True)


def read_command(path):
    return ["exiftool", "-j", "-n", *[f"-{t}" for t in READ_TAGS], path]


def read_tags(path):
    out = subprocess.run(read_command(path), check=True, capture_output=True, text=True).stdout
    reading = json.loads(out)[0]
    reading.pop("SourceFile", None)
    return reading


def main():
    os.makedirs(OUT_DIR, exist_ok=True)
    version = subprocess.run(["exiftool", "-ver"], check=True, capture_output=True, text=True)
    cases = []
    for name, size, tags, purpose in CASES:
        path = os.path.join(OUT_DIR, name)
        write_base(path, size)
        if tags is not None:
            write_tags(path, tags)
        cases.append(
            {
                "file": name,
                "purpose": purpose,
                "written_tags": tags or {},
                "exiftool": read_tags(path),
            }
        )
    record = {
        "generator": {
            "script": SCRIPT,
            "command": f"python3 {SCRIPT}",
            "exiftool_version": version.stdout.strip(),
            "exiftool_read_command": " ".join(read_command("FILE")),
            "opencv_version": cv2.__version__,
            "numpy_version": np.__version__,
        },
        "cases": cases,
    }
    with open(os.path.join(OUT_DIR, "exiftool_reading.json"), "w") as f:
        json.dump(record, f, indent=1, sort_keys=False)
        f.write("\n")


if __name__ == "__main__":
    main()
