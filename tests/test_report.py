"""Reports: every section, checksums and versions, self-containment, and a real browser rendering it."""

from __future__ import annotations

import hashlib
import html.parser
import os
import pathlib
import re
import shutil
import subprocess

import numpy as np
import pytest

from cvdfilter.cautions import CAVEAT, EYE_CARE_CAUTION, ROAD_CAUTION
from cvdfilter.errors import InputError
from cvdfilter.reporting import REFERENCES, SECTIONS, report, transmittance_sha256

CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync",
                  "--enable-logging=stderr", "--v=0"]


@pytest.fixture(scope="module")
def lens_file(tmp_path_factory):
    # An invented measured filter (percent transmittance, 5 nm steps) to check file checksums.
    f = tmp_path_factory.mktemp("lens") / "bench lens.csv"
    wl = np.arange(380, 781, 5)
    t = 92 - 70 * np.exp(-0.5 * ((wl - 585) / 9.0) ** 2)
    f.write_text("nm,T%\n" + "\n".join(f"{w},{v:.3f}" for w, v in zip(wl, t)) + "\n")
    return f


@pytest.fixture(scope="module")
def built(lens_file, tmp_path_factory):
    out = tmp_path_factory.mktemp("report")
    r = report([str(lens_file), "larkhill-notch-575", "notch:center=530,fwhm=20,depth=0.6"],
               observers=["normal", "deuteranomalous:shift=8", "deuteranope"], surfaces="chart24")
    html_path = out / "report.html"
    md_path = out / "sub" / "report.md"
    r.save(html_path)
    r.save(md_path)
    return r, html_path, md_path


def test_html_has_every_section(built):
    r, html_path, _ = built
    text = html_path.read_text()
    for sid, heading in SECTIONS.items():
        assert f'id="{sid}"' in text and heading in text
    for kind in ("spectrum", "chromaticity", "gains", "swatches", "hues"):
        assert f'id="figure-{kind}"' in text
    assert text.count("<svg") == 5
    for caution in (CAVEAT, ROAD_CAUTION, EYE_CARE_CAUTION):
        assert caution.replace("'", "&#x27;") in text
    for use, ref in REFERENCES:
        assert use in text
    for needle in ("Photometry and road use", "Colour rendition", "Per observer", "Road-use reasons",
                   "Full scorecard (JSON)"):
        assert needle in text


def test_inputs_and_versions_are_recorded(built, lens_file):
    r, html_path, _ = built
    text = html_path.read_text()
    # the file's own SHA-256 (hashlib) and the transmittance checksum of every filter
    assert hashlib.sha256(lens_file.read_bytes()).hexdigest() in text
    from cvdfilter.spectra.filters import load_filters

    fs = load_filters([str(lens_file), "larkhill-notch-575", "notch:center=530,fwhm=20,depth=0.6"])
    for t in fs.transmittance:
        assert transmittance_sha256(t) in text
    assert transmittance_sha256(np.ones(401)) == hashlib.sha256(np.ones(401, "<f8").tobytes()).hexdigest()
    import colour
    import matplotlib

    env = r.environment
    assert env["libraries"]["colour-science"] == colour.__version__
    assert env["libraries"]["matplotlib"] == matplotlib.__version__
    for needle in ("D65", "deuteranomalous:shift=8", "chart24", "von Kries", "380-780 nm",
                   f"cvdfilter {env['version']}", "Weber fraction"):
        assert needle in text
    assert "cvdfilter report" in r.command and "--observer deuteranope" in r.command
    assert "--surfaces chart24" in r.command


def test_html_is_self_contained_and_well_formed(built):
    _, html_path, _ = built
    text = html_path.read_text()
    assert "<script" not in text.lower() and "<link" not in text.lower() and "@import" not in text
    assert not re.search(r'(src|href)\s*=\s*"(?!#|data:)', text)       # nothing to fetch
    assert "Content-Security-Policy" in text and "default-src 'none'" in text
    assert "<?xml" not in text and "<!DOCTYPE svg" not in text
    ids = re.findall(r'\bid="([^"]+)"', text)
    assert len(ids) == len(set(ids))                                     # figure ids do not collide

    class Balance(html.parser.HTMLParser):
        void = {"meta", "br", "img", "hr", "input", "link", "path", "rect", "use", "stop", "circle",
                "ellipse", "line", "polyline", "polygon", "image"}

        def __init__(self):
            super().__init__()
            self.stack = []

        def handle_starttag(self, tag, attrs):
            if tag not in self.void:
                self.stack.append(tag)

        def handle_startendtag(self, tag, attrs):
            pass

        def handle_endtag(self, tag):
            if tag in self.void:
                return
            assert self.stack and self.stack[-1] == tag, (tag, self.stack[-3:])
            self.stack.pop()

    b = Balance()
    b.feed(text)
    assert b.stack == []


def test_markdown_has_every_section_and_its_figures(built):
    r, _, md_path = built
    text = md_path.read_text()
    for heading in SECTIONS.values():
        assert f"## {heading}" in text
    folder = md_path.parent / "report_figures"
    svgs = sorted(p.name for p in folder.glob("*.svg"))
    assert svgs == ["01-spectrum.svg", "02-chromaticity.svg", "03-gains.svg", "04-swatches.svg", "05-hues.svg"]
    for name in svgs:
        assert f"](report_figures/{name})" in text
        assert (folder / name).read_bytes().startswith(b"<?xml")
    import json

    card = json.loads((folder / "scorecard.json").read_text())
    assert card["caveat"] == CAVEAT and len(card["filters"]) == 3
    assert CAVEAT in text


def test_report_is_deterministic(built, tmp_path):
    r, html_path, _ = built
    assert r.to_html() == html_path.read_text()


def test_report_bad_input_writes_nothing(tmp_path):
    with pytest.raises(InputError):
        report(["no-such-filter"], output=tmp_path / "r.html")
    with pytest.raises(InputError):
        report(["larkhill-notch-575"], output=tmp_path / "r.pdf")
    assert list(tmp_path.iterdir()) == []


# --- a real browser ----------------------------------------------------------------------------

@pytest.fixture(scope="session")
def chromium():
    """Path to Chromium; installed with apt-get when missing and we are root, else the test is skipped."""
    exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if exe is None and hasattr(os, "geteuid") and os.geteuid() == 0 and shutil.which("apt-get"):
        env = {**os.environ, "DEBIAN_FRONTEND": "noninteractive"}
        try:
            # A fresh machine has no package lists yet: update them first.
            subprocess.run(["apt-get", "update"], capture_output=True, timeout=600, check=False, env=env)
            subprocess.run(["apt-get", "install", "-y", "--no-install-recommends", "chromium"],
                           capture_output=True, timeout=900, check=False, env=env)
        except (OSError, subprocess.TimeoutExpired):
            pass
        exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if exe is None:
        pytest.skip("headless Chromium is not installed and could not be installed here "
                    "(Debian package 'chromium'; needs root and the package archive)")
    return exe


def _run_chromium(exe, tmp_path, *args):
    profile = tmp_path / "profile"
    return subprocess.run([exe, *CHROMIUM_FLAGS, f"--user-data-dir={profile}", *args], capture_output=True,
                          text=True, timeout=180)


def test_html_renders_in_headless_chromium(built, chromium, tmp_path):
    _, html_path, _ = built
    url = pathlib.Path(html_path).resolve().as_uri()
    dom = _run_chromium(chromium, tmp_path, "--dump-dom", url)
    assert dom.returncode == 0, dom.stderr[-2000:]
    # The browser's DOM has every section and the caveat, and no console message at all: any script,
    # blocked request or parse problem would be logged as a CONSOLE line.
    assert CAVEAT.replace("'", "&#x27;") in dom.stdout or CAVEAT in dom.stdout
    for sid in SECTIONS:
        assert f'id="{sid}"' in dom.stdout
    assert dom.stdout.count("<svg") == 5
    assert "CONSOLE" not in dom.stderr, [line for line in dom.stderr.splitlines() if "CONSOLE" in line]
    shot = tmp_path / "shot.png"
    r = _run_chromium(chromium, tmp_path, "--window-size=1000,3000", f"--screenshot={shot}", url)
    assert r.returncode == 0 and shot.exists(), r.stderr[-2000:]
    from PIL import Image

    with Image.open(shot) as im:
        px = np.asarray(im.convert("RGB"), dtype=float)
    assert px.std() > 20                                   # not a blank page
    # the caveat box (vermillion border, pale fill) is painted near the top
    top = px[:600]
    assert np.any(np.all(np.abs(top - [213, 94, 0]) < 30, axis=-1))


def test_report_of_a_sweep_adds_the_sweep_figure_and_says_what_it_leaves_out():
    r = report("notch:center=530..620/10,fwhm=30,depth=0.8", observers=["normal", "deuteranope"],
               surfaces="chart24", metrics="core")
    kinds = {f.kind: f for f in r.figures}
    assert kinds["sweep"].svg and kinds["spectrum"].svg
    assert not kinds["chromaticity"].svg and "at most 4 filters" in kinds["chromaticity"].note
    assert not kinds["gains"].svg and "at most 8" in kinds["gains"].note
    assert "hues" not in kinds                        # no rendition block: no hue figure
    text = r.to_html()
    assert "Not drawn" in text and 'id="figure-sweep"' in text
    # a figure left out gets a note but never a caption or a number; the drawn ones are numbered 1, 2, ...
    drawn = [f for f in r.figures if f.svg]
    assert text.count("<figcaption>") == len(drawn)
    numbers = [int(m) for m in re.findall(r"<strong>Figure (\d+)\.</strong>", text)]
    assert numbers == list(range(1, len(drawn) + 1))
    md, _ = r.to_markdown()
    assert [int(m) for m in re.findall(r"\*\*Figure (\d+)\.\*\*", md)] == list(range(1, len(drawn) + 1))
    # the two-parameter-free sweep caption names its parameter
    assert "swept parameter (center)" in kinds["sweep"].caption


def test_report_per_observer_table_groups_by_filter_with_readable_observers():
    r = report(["larkhill-notch-575", "larkhill-rose-tint"], observers=["normal", "protanomalous:shift=16"],
               surfaces="chart24", metrics="core")
    text = r.to_html()
    table = text[text.index('<table class="observers">'):]
    table = table[:table.index("</table>")]
    # one full-width row names each filter; observers by their one readable label, not the spec
    assert table.count('scope="rowgroup"') == 2 and "protanomalous (shift 16 nm)" in table
    assert "protanomalous:shift=16" not in table
    assert "contrast gain (with / without filter)" in table
