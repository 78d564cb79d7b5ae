"""How robust are the scorecard's pair metrics? Rank stability across thresholds, and a 0.5 % ripple.

Prints, for each deficient observer:
  * the Spearman rank correlation between the rankings of notch centres 530-620 nm (FWHM 30 nm,
    depth 0.8) at the default JND thresholds (1 JND) and at x0.8 / x1.25, for the net confused pairs
    resolved (resolved - created) and for the median Delta S ratio, and the best centre under each;
  * how far a 0.5 % sinusoidal ripple (periods 5-80 nm, two phases) on a 50 % grey filter moves the
    net resolved count and the median Delta S ratio away from the plain grey filter (which changes nothing).

A measurement, not a test (tests/test_scorecard.py checks looser bounds). Usage:
python benchmarks/metric_robustness.py
"""

from __future__ import annotations

import pathlib
import sys

import numpy as np

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent.parent))

OBSERVERS = ["protanomalous", "deuteranomalous", "protanope", "deuteranope"]
SWEEP = "notch:center=530..620/5,fwhm=30,depth=0.8"


def measures(card: dict):
    net = np.array([[o["confusion_pairs"]["resolved"] - o["confusion_pairs"]["created"] for o in f["observers"]]
                    for f in card["filters"]], dtype=float)
    ratio = np.array([[o["confusion_pairs"]["median_delta_s_ratio"] for o in f["observers"]]
                      for f in card["filters"]], dtype=float)
    return net, ratio


def main() -> None:
    from scipy.stats import spearmanr

    from cvdfilter.scorecard import score
    from cvdfilter.spectra.grid import DEFAULT_GRID

    centres = np.arange(530, 621, 5)

    def run(factor: float):
        t = 1.0 * factor
        return measures(score(SWEEP, observers=OBSERVERS, metrics="confusion", normal_threshold=t,
                              deficient_threshold=t, discrimination_threshold=t).to_dict())

    base_net, base_ratio = run(1.0)
    print("Rank stability of notch centres 530-620 nm (FWHM 30, depth 0.8), thresholds 1 JND vs moved:")
    for factor in (0.8, 1.25):
        net, ratio = run(factor)
        for k, o in enumerate(OBSERVERS):
            r_net = spearmanr(base_net[:, k], net[:, k]).statistic
            r_ratio = spearmanr(base_ratio[:, k], ratio[:, k]).statistic
            print(f"  x{factor:<4g} {o:16s} net resolved rho={r_net:5.2f} (best {centres[np.argmax(base_net[:, k])]}"
                  f" -> {centres[np.argmax(net[:, k])]} nm)   median ratio rho={r_ratio:5.2f} (best "
                  f"{centres[np.argmax(base_ratio[:, k])]} -> {centres[np.argmax(ratio[:, k])]} nm)")
    wl = DEFAULT_GRID.wavelengths
    grey = np.full(wl.size, 0.5)
    rippled = [grey * (1 + 0.005 * np.sin(2 * np.pi * wl / p + ph)) for p in (5, 10, 20, 40, 80) for ph in (0, 1.3)]
    net, ratio = measures(score(np.stack([grey, *rippled]), observers=OBSERVERS, metrics="confusion").to_dict())
    print("0.5 % ripple on a 50 % grey filter (10 ripples), largest change from the plain grey filter:")
    for k, o in enumerate(OBSERVERS):
        print(f"  {o:16s} net resolved {np.abs(net[1:, k] - net[0, k]).max():3.0f} pairs   median ratio "
              f"{np.abs(ratio[1:, k] - ratio[0, k]).max():.5f}")
    print("Ranges over the sweep at 1 JND (for scale): net resolved",
          {o: (int(base_net[:, k].min()), int(base_net[:, k].max())) for k, o in enumerate(OBSERVERS)},
          "median ratio", {o: (round(float(base_ratio[:, k].min()), 4), round(float(base_ratio[:, k].max()), 4))
                           for k, o in enumerate(OBSERVERS)})


if __name__ == "__main__":
    main()
