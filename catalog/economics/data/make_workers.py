"""Generate the INVENTED demo data ``workers-two-skills.csv`` (seeded; re-run to reproduce it exactly).

Demo data only, no real survey: 5000 workers with two skills in [0, 1] (a Gaussian copula with
correlation 0.4, so the skill marginals are uniform and the skills positively related) and a
survey-style weight in [0.5, 1.5].  Run from the repository root:

    python catalog/economics/data/make_workers.py
"""

from pathlib import Path

import numpy as np
from scipy.special import ndtr

SEED = 20261202
COUNT = 5000


def main() -> None:
    rng = np.random.default_rng(SEED)
    z = rng.multivariate_normal([0.0, 0.0], [[1.0, 0.4], [0.4, 1.0]], size=COUNT)
    skills = ndtr(z)
    weight = rng.uniform(0.5, 1.5, size=COUNT)
    path = Path(__file__).with_name("workers-two-skills.csv")
    with path.open("w") as handle:
        handle.write("analytic,manual,weight\n")
        for (a, m), w in zip(skills, weight):
            handle.write(f"{a:.5f},{m:.5f},{w:.4f}\n")


if __name__ == "__main__":
    main()
