"""The HTML report: self-contained, escaped, plots drawn; opened in headless Chromium to see it render."""
from __future__ import annotations

import math
import shutil
import subprocess
import sys
from html.parser import HTMLParser
from pathlib import Path

import mpmath
import pytest
import scipy.special

from auditor.cli import main
from auditor.model import Finding, Measurement, Report, Rewrite, SeriesFigures, Severity, Span, Stats, Verdict
from auditor.report.html import render_html

ROOT = Path(__file__).resolve().parent.parent
BLUE, RED = (31, 119, 180), (214, 39, 40)  # matplotlib's tab:blue and tab:red (matplotlib docs, common practice)


def digits_lost(float_value: float, ref: mpmath.mpf) -> float:
    """CONTRACT.md: max(0, 15.95 + log10(|float - ref| / |ref|))."""
    err = abs((mpmath.mpf(float_value) - ref) / ref)
    return 0.0 if err == 0 else max(0.0, 15.95 + float(mpmath.log10(err)))


def expm1_measurement() -> Measurement:
    """exp(x) - 1 in floats against mpmath.expm1 at 50 digits, x log-spaced over 1e-15..1."""
    xs = [10.0 ** (-15 + 15 * i / 63) for i in range(64)]
    with mpmath.workdps(50):
        points = tuple((x, digits_lost(math.exp(x) - 1, mpmath.expm1(mpmath.mpf(x)))) for x in xs)
    worst = max(points, key=lambda p: p[1])
    median = sorted(d for _, d in points)[len(points) // 2]
    return Measurement(len(points), worst[1], median, 0.0, {"x": worst[0]}, math.exp(worst[0]) - 1,
                       mpmath.nstr(mpmath.expm1(worst[0]), 20), Verdict.UNSTABLE, "cancellation in exp(x) - 1",
                       points=points)


def erfc_series() -> SeriesFigures:
    """Asymptotic series of erfc at z = 3 (A&S 7.1.23): terms (2m-1)!!/(2z^2)^m shrink until m = 9, then grow."""
    z = 3.0
    mags = [1.0]
    for m in range(1, 20):
        mags.append(mags[-1] * (2 * m - 1) / (2 * z * z))
    k = min(range(len(mags)), key=mags.__getitem__)
    pre = math.exp(-z * z) / (z * math.sqrt(math.pi))
    partial = pre * sum((-1) ** m * mags[m] for m in range(k))
    # optimal truncation: the error is below the first omitted (smallest) term (A&S 7.1.24)
    assert abs(partial - scipy.special.erfc(z)) <= pre * mags[k]
    return SeriesFigures(terms=len(mags), cancellation_log10=0.4, smallest_term_index=k, smallest_term=mags[k],
                         divergent=True, optimal_terms=k, truncation_error=pre * mags[k], term_magnitudes=tuple(mags))


def sample_report() -> Report:
    m = expm1_measurement()
    first = Finding("exp-minus-one", Severity.ERROR, "lab/gauge.py", Span(6, 12, 6, 27), "use math.expm1(x)",
                    "math.exp(x) - 1", "gain", m, Rewrite("math.expm1(x)", True, 0.0, imports=("import math",)))
    series = erfc_series()
    pre = math.exp(-9.0) / (3.0 * math.sqrt(math.pi))
    summed = pre * sum((-1) ** m * t for m, t in enumerate(series.term_magnitudes))  # all 20 terms: past the smallest
    ref = scipy.special.erfc(3.0)
    with mpmath.workdps(30):
        lost = digits_lost(summed, mpmath.mpf(ref))  # scipy's double erfc is far closer than the series here
    m2 = Measurement(1, lost, lost, 0.2, {"z": 3.0}, summed, repr(ref), Verdict.UNSTABLE,
                     "summed past the smallest term", series=series)
    second = Finding("divergent-series", Severity.WARNING, "lab/tail<&>.py", Span(12, 5, 14, 20),
                     "stop at the smallest term", "for m in range(20):\n    s += t  # <script>alert(1)</script>",
                     "tail", m2)
    return Report((first, second), (), Stats(2, 40, 0.5))


class Tags(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.tags: list[tuple[str, dict[str, str | None]]] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.tags.append((tag, dict(attrs)))


def parse(page: str) -> list[tuple[str, dict[str, str | None]]]:
    parser = Tags()
    parser.feed(page)
    return parser.tags


def test_page_is_self_contained_and_escaped() -> None:
    page = render_html(sample_report())
    tags = parse(page)
    names = [t for t, _ in tags]
    assert names.count("svg") == 2 and names.count("section") == 3  # summary + 2 findings
    assert "script" not in names and "link" not in names and "img" not in names
    for _, attrs in tags:
        assert not (attrs.get("src") or "").strip()
        assert not (attrs.get("href") or "#").startswith(("http:", "https:", "//"))
    ids = [a["id"] for _, a in tags if a.get("id")]
    assert len(ids) == len(set(ids))  # salted per figure: clip paths and markers never cross figures
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page and "lab/tail&lt;&amp;&gt;.py" in page


def test_findings_show_figures_and_rewrite_diff() -> None:
    page = render_html(sample_report())
    assert "<code>exp-minus-one</code>" in page and "lab/gauge.py:6:12" in page
    assert '<span class="del">-math.exp(x) - 1</span>' in page
    assert '<span class="add">+import math</span><span class="add">+math.expm1(x)</span>' in page
    assert "Rewrite (verified, worst digits lost after: 0.0)" in page
    assert "smallest term, k=9" in page and "optimal truncation: 9 terms" in page
    assert "digits lost across the sampled inputs" in page
    worst = sample_report().findings[0].measurement.digits_lost_max
    assert worst > 14  # near x = 1e-15 exp(x) - 1 keeps almost no correct digit (mpmath, 50 digits)
    assert f"<tr><td>exp-minus-one</td><td class=num>1</td><td class=num>{worst:.1f}</td></tr>" in page


def test_without_matplotlib_the_page_says_so(tmp_path: Path) -> None:
    script = (
        "import sys; sys.modules['matplotlib'] = None\n"  # matplotlib made unimportable in this process
        f"sys.path.insert(0, {str(ROOT)!r}); sys.path.insert(0, {str(Path(__file__).parent)!r})\n"
        "import test_html\nfrom auditor.report.html import render_html\n"
        "print(render_html(test_html.sample_report()))\n"
    )
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    assert "matplotlib is not installed" in done.stdout and "<svg" not in done.stdout
    assert "<th>verdict</th>" in done.stdout


def test_cli_scan_html(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    (tmp_path / "gauge.py").write_text("import math\n\n\ndef gain(x):\n    return math.exp(x) - 1\n")
    assert main(["scan", "gauge.py", "--format", "html", "--output", "r.html"]) == 1
    page = (tmp_path / "r.html").read_text()
    assert page.startswith("<!DOCTYPE html>") and "gauge.py:5:12" in page and "Plots are not shown" not in page


def chromium() -> str | None:
    return shutil.which("chromium") or shutil.which("chromium-browser")


def browser(tmp_path: Path, *args: str) -> subprocess.CompletedProcess[str]:
    exe = chromium()
    assert exe is not None
    flags = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
             "--disable-background-networking", "--disable-component-update", "--disable-sync",
             f"--user-data-dir={tmp_path / 'profile'}"]
    return subprocess.run([exe, *flags, *args], capture_output=True, text=True, timeout=120)


def colour_pixels(png: Path, rgb: tuple[int, int, int]) -> int:
    import matplotlib.image

    image = matplotlib.image.imread(str(png))[..., :3]
    scale = 255.0 if image.dtype.kind == "f" else 1.0
    distance = abs(image * scale - rgb).max(axis=-1)
    return int((distance < 12).sum())


@pytest.mark.skipif(chromium() is None, reason="chromium is not installed (.ci/run installs Debian's chromium)")
def test_renders_in_headless_chromium_with_plots_visible(tmp_path: Path) -> None:
    page = tmp_path / "report.html"
    page.write_text(render_html(sample_report()), encoding="utf-8")
    dom = browser(tmp_path, "--dump-dom", page.as_uri())
    assert dom.returncode == 0, dom.stderr[-2000:]
    assert dom.stdout.count("<svg") == 2 and "smallest term, k=9" in dom.stdout
    shot = tmp_path / "shot.png"
    done = browser(tmp_path, f"--screenshot={shot}", "--window-size=1100,3200", "--hide-scrollbars", page.as_uri())
    assert shot.is_file(), done.stderr[-2000:]
    # the scatter points (tab:blue) and the smallest-term star (tab:red) were painted: the plots are visible
    assert colour_pixels(shot, BLUE) > 200
    assert colour_pixels(shot, RED) > 30
