"""Generate the invented data of the example studies (demo only, never reference values).

Scenario: the laboratory of a (fictional) regional water utility validates
nitrate and fluoride in drinking water by ion chromatography with
conductivity detection. Every number is drawn from a fixed-seed random
generator around responses we chose; run this script to recreate the CSVs.
"""

from pathlib import Path

import numpy as np

HERE = Path(__file__).parent
rng = np.random.default_rng(20261201)


def write(path, header, rows):
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(",".join(header) + "\n")
        for r in rows:
            fh.write(",".join(str(v) for v in r) + "\n")


def anions():
    folder = HERE / "anions-drinking-water"
    folder.mkdir(exist_ok=True)
    analytes = {
        # name: (levels mg/L, intercept, slope, curvature, relative sd, absolute sd)
        "nitrate": ((0.5, 1, 2, 5, 10, 20, 40), 0.004, 0.1873, 0.0, 0.012, 0.002),
        "fluoride": ((0.05, 0.1, 0.2, 0.5, 1.0, 1.5, 2.0), 0.001, 0.4120, -0.0150, 0.010, 0.0008),
    }
    cal, fits = [], {}
    for name, (levels, a, b, c, rel, ab) in analytes.items():
        fits[name] = (a, b, c)
        for x in levels:
            for rep in range(3):
                mu = a + b * x + c * x * x
                y = mu + rng.normal(0, ab + rel * mu)
                cal.append((name, x, f"{y:.5f}", f"run-{rep + 1}"))
    write(folder / "calibration.csv", ("analyte", "concentration", "response", "series"), cal)
    samples = []
    for name, truths in (("nitrate", (3.1, 12.4, 27.0, 55.0)), ("fluoride", (0.31, 0.74, 1.12))):
        a, b, c = fits[name]
        for i, x in enumerate(truths, start=1):
            for _ in range(2):
                mu = a + b * x + c * x * x
                samples.append((f"{name[:2].upper()}-{i:03d}", name, f"{mu + rng.normal(0, 0.01 * mu):.5f}"))
    write(folder / "samples.csv", ("sample", "analyte", "response"), samples)


if __name__ == "__main__":
    anions()
