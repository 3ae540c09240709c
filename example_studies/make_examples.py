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

    blanks = [(name, f"{analytes[name][1] + rng.normal(0, analytes[name][5] * 1.5):.5f}")
              for name in analytes for _ in range(10)]
    write(folder / "blanks.csv", ("analyte", "response"), blanks)

    # spike recovery in a groundwater matrix with native analyte, three levels x 3 replicates
    recovery = []
    for name, native, added_levels, bias in (("nitrate", 3.1, (2, 10, 30), 0.985),
                                             ("fluoride", 0.21, (0.1, 0.5, 1.5), 1.01)):
        for added in added_levels:
            for _ in range(3):
                found = native + bias * added * (1 + rng.normal(0, 0.02)) + rng.normal(0, 0.003)
                recovery.append((name, native, added, f"{found:.4f}", "matrix-GW1"))
    write(folder / "recovery.csv", ("analyte", "native", "added", "found", "series"), recovery)

    # precision: 3 days x 3 replicates at 3 levels; the middle fluoride level lost one result (unbalanced)
    precision = []
    for name, levels in (("nitrate", (0.5, 10.0, 30.0)), ("fluoride", (0.1, 0.5, 1.5))):
        for level in levels:
            for day in range(1, 4):
                day_effect = rng.normal(0, 0.012 * level)
                reps = 2 if (name == "fluoride" and level == 0.5 and day == 2) else 3
                for _ in range(reps):
                    precision.append((name, level, f"day-{day}",
                                      f"{level + day_effect + rng.normal(0, 0.015 * level):.4f}"))
    write(folder / "precision.csv", ("analyte", "level", "series", "found"), precision)

    # certified reference material for nitrate (invented certificate: 12.5 mg/L, u = 0.15 mg/L)
    write(folder / "crm.csv", ("found",), [(f"{12.5 * (1 + rng.normal(-0.004, 0.012)):.3f}",) for _ in range(6)])

    # nested precision: 3 days x 2 runs x 2 replicates at 3 levels (each run with its own calibration);
    # one result of the middle fluoride level was lost (unbalanced: REML). Its own generator, so that
    # the files above and the second example keep their numbers.
    nested_rng = np.random.default_rng(20261202)
    runs = []
    for name, levels, bias in (("nitrate", (0.5, 10.0, 30.0), 0.992), ("fluoride", (0.1, 0.5, 1.5), 1.006)):
        for level in levels:
            for day in range(1, 4):
                day_effect = nested_rng.normal(0, 0.010 * level)
                for run in range(1, 3):
                    run_effect = nested_rng.normal(0, 0.008 * level)
                    lost = name == "fluoride" and level == 0.5 and day == 3 and run == 2
                    for _ in range(1 if lost else 2):
                        found = bias * level + day_effect + run_effect + nested_rng.normal(0, 0.012 * level)
                        runs.append((name, level, f"day-{day}", f"run-{run}", f"{found:.4f}"))
    write(folder / "precision-runs.csv", ("analyte", "level", "day", "run", "found"), runs)


def after_maintenance():
    """The same laboratory re-validates after the suppressor and conductivity cell were replaced.

    Invented outcome: nitrate responds as before (+1 % slope), fluoride has lost about 9 %
    sensitivity. The previous validation's results.json is made by running validator on the
    anions study (see the study file's header).
    """
    folder = HERE / "anions-after-maintenance"
    folder.mkdir(exist_ok=True)
    analytes = {
        "nitrate": ((0.5, 1, 2, 5, 10, 20, 40), 0.003, 0.1873 * 1.01, 0.0, 0.012, 0.002),
        "fluoride": ((0.05, 0.1, 0.2, 0.5, 1.0, 1.5, 2.0), 0.001, 0.4120 * 0.91, -0.0150 * 0.91, 0.010, 0.0008),
    }
    cal = []
    for name, (levels, a, b, c, rel, ab) in analytes.items():
        for x in levels:
            for rep in range(3):
                mu = a + b * x + c * x * x
                cal.append((name, x, f"{mu + rng.normal(0, ab + rel * mu):.5f}", f"run-{rep + 1}"))
    write(folder / "calibration.csv", ("analyte", "concentration", "response", "series"), cal)
    comparison = []
    for name, factor, truths in (("nitrate", 1.004, rng.uniform(1, 38, 14)),
                                 ("fluoride", 0.93, rng.uniform(0.08, 1.9, 14))):
        for i, x in enumerate(truths, start=1):
            ref = x * (1 + rng.normal(0, 0.015))
            test = factor * x * (1 + rng.normal(0, 0.015))
            comparison.append((f"DW-{i:03d}", name, f"{ref:.4f}", f"{test:.4f}"))
    write(folder / "comparison.csv", ("sample", "analyte", "reference", "test"), comparison)


if __name__ == "__main__":
    anions()
    after_maintenance()
