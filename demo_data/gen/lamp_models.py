"""Writes demo_data/lamp_models.csv: the lookup table of the invented city's
lamps (id, model, installation year) that jobs/lamp_models.json joins to the
demo events. Deterministic (Python's random with a fixed seed); the lamp ids
are the generator's (demo_data/gen/lamp_world.cc: lamp i is
"L-%05u" % ((i * 7919 + 421) % 100000), 1200 lamps by default). Every 40th
lamp (i % 40 == 17) is left out, as lamps not yet catalogued, so that some
events find no row.

    python3 demo_data/gen/lamp_models.py demo_data/lamp_models.csv
"""

import csv
import random
import sys

# Invented models, each sold in its own years.
MODELS = [("Corvane 40", 1996, 2008), ("Hollis Arc", 2003, 2015), ("Pellmoor LED", 2012, 2022),
          ("Tarrow Mk2", 2016, 2025), ("Wendle Globe", 1990, 2001)]


def main(path):
    rng = random.Random(2026)
    with open(path, "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["lamp_id", "model", "installed"])
        for i in range(1200):
            if i % 40 == 17:
                continue
            model, first, last = rng.choice(MODELS)
            w.writerow(["L-%05d" % ((i * 7919 + 421) % 100000), model, rng.randint(first, last)])


if __name__ == "__main__":
    main(sys.argv[1])
