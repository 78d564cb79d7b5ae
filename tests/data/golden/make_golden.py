"""Write the golden outputs that tests/test_golden.py compares against, byte for byte.

Run from the repository root: ``.venv/bin/python tests/data/golden/make_golden.py``. Rerun it only when an
output changes on purpose (a fixed defect, a new column), and say so in the commit message: the golden files
guard refactorings, which must leave every output unchanged.
"""

from __future__ import annotations

import hashlib
import json
import pathlib
import re
import sys

HERE = pathlib.Path(__file__).resolve().parent
ROOT = HERE.parents[2]

#: The bundled (invented) example filters and a few observers of every kind.
FILTERS = ["larkhill-notch-575", "larkhill-double-notch", "larkhill-rose-tint", "larkhill-grey-reference"]
OBSERVERS = ["normal", "deuteranomalous:shift=8", "protanope", "tritanope"]
#: Renders: one image, one cube, every kind of simulation the renderer uses by default.
RENDERS = [("tabletop.png", "deuteranope"), ("tabletop.png", "protanomalous:shift=8"),
           ("dots_deutan.png", "tritanope")]


def _clean(text: str) -> str:
    """Outputs without what depends on the install: the version and the checkout's path."""
    from cvdfilter._version import __version__

    text = text.replace(str(ROOT), "ROOT").replace(__version__, "VERSION")
    # The report's environment rows name the Python, library and platform versions.
    return re.sub(r"^\| (Tool|Libraries|Platform) \|.*\|$", r"| \1 | ENVIRONMENT |", text, flags=re.M)


def outputs() -> dict[str, bytes]:
    """File name -> bytes of every golden output, computed now."""
    import numpy as np

    import cvdfilter
    from cvdfilter.io.images import read_image

    out: dict[str, bytes] = {}
    card = cvdfilter.score(FILTERS, observers=OBSERVERS, metrics="all")
    for name, text in (("score.json", card.to_json()), ("score.csv", card.to_csv()),
                       ("score.md", card.to_markdown()), ("score.txt", card.to_table(width=100))):
        out[name] = _clean(text).encode("utf-8")
    sens = cvdfilter.score(FILTERS[:2], observers=["deuteranomalous:shift=8"], metrics="core", sensitivity=True)
    out["score-sensitivity.txt"] = _clean(sens.to_table(width=100)).encode("utf-8")
    out["score-sensitivity.md"] = _clean(sens.to_markdown()).encode("utf-8")
    digests = {}
    for image, obs in RENDERS:
        px = read_image(ROOT / "test_images" / image).pixels
        views = cvdfilter.render_views(px, filter="larkhill-notch-575", observer=obs)
        for view, pixels in views.items():
            digests[f"{image} {obs} {view}"] = _digest(pixels)
    cube = ROOT / "test_images" / "tabletop_cube.npz"
    for obs in ("deuteranope", "deuteranomalous:shift=8"):
        digests[f"tabletop_cube.npz {obs}"] = _digest(cvdfilter.render(cube, filter="larkhill-notch-575",
                                                                       observer=obs))
    px = read_image(ROOT / "test_images" / "tabletop.png").pixels
    digests["tabletop.png deuteranope float32"] = _digest(cvdfilter.render(
        px, filter="larkhill-double-notch", observer="deuteranope", dtype=np.float32))
    out["render-digests.json"] = (json.dumps(digests, indent=1, sort_keys=True) + "\n").encode("utf-8")
    rep = cvdfilter.report(FILTERS[:2], observers=OBSERVERS[:3], metrics="core")
    text, files = rep.to_markdown("report_figures")
    out["report.md"] = _clean(text).encode("utf-8")
    gains = cvdfilter.figure("gains", FILTERS, observers=OBSERVERS)
    out["figure-gains.svg"] = gains.to_bytes("svg")
    return out


def _digest(a) -> str:
    """Shape, dtype and SHA-256 of an array's bytes (C order)."""
    import numpy as np

    a = np.ascontiguousarray(a)
    return f"{a.shape} {a.dtype} {hashlib.sha256(a.tobytes()).hexdigest()}"


def main() -> None:
    for name, data in outputs().items():
        (HERE / name).write_bytes(data)
        print(f"{name}: {len(data)} bytes")


if __name__ == "__main__":
    sys.path.insert(0, str(ROOT))
    main()
