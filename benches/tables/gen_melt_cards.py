#!/usr/bin/env python3
"""Write N invented melt cards as CSV for the table benchmark (run.sh).

Every number is invented: VFT constants, liquidus, crystal data and nuclei
are drawn at random, with a fixed seed, from ranges around the invented demo
melt card (demo-datasets/melt-card.toml), so that almost every row is a
melt the kinetics accept. The columns are those of
demo-datasets/melt-cards.csv.

Usage: gen_melt_cards.py N OUT.csv [SEED]
"""
import random
import sys


def main():
    n = int(sys.argv[1])
    out = sys.argv[2]
    rng = random.Random(int(sys.argv[3]) if len(sys.argv) > 3 else 12)
    u = rng.uniform
    with open(out, "w") as f:
        f.write(
            "a,b_k,c_k,liquidus_k,enthalpy_of_fusion_j_per_mol,"
            "molar_volume_m3_per_mol,turnbull_alpha,growth,driving_force,"
            "heterogeneous_nuclei_per_m3\n"
        )
        for _ in range(n):
            nuclei = 0 if rng.random() < 0.7 else 10 ** u(4, 10)
            f.write(
                "%.3f,%.1f,%.1f,%.1f,%.0f,%.4g,%.4f,%s,%s,%.4g\n"
                % (
                    u(-3.2, -2.4),
                    u(4000, 5500),
                    u(430, 560),
                    u(1220, 1420),
                    u(50000, 95000),
                    u(4.0e-5, 8.0e-5),
                    u(0.30, 0.40),
                    "normal" if rng.random() < 0.6 else "screw",
                    "turnbull" if rng.random() < 0.7 else "hoffman",
                    nuclei,
                )
            )


if __name__ == "__main__":
    main()
