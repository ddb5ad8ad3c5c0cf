"""``check --format html``: one self-contained, deterministic, escaped and accessible page; the Markdown stage lines;
the check path stays free of the plotting and template libraries."""

from __future__ import annotations

import io
import re
import subprocess
import sys
from html.parser import HTMLParser
from pathlib import Path

import pytest

from afecheck.api import review_files
from afecheck.cli import main
from afecheck.report import markup
from afecheck.report.html import render_html

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = sorted(p for p in (ROOT / "sample_designs").glob("*.yaml") if not p.name.endswith(".intent.yaml"))
HOSTILE = """\
afecheck: 1
name: "<script>window.__xss = 1</script> & $\\\\frac{1}{0}$ </title>"
ground: GND
rails:
  VCC: {voltage: 5 V, tolerance: 5%}
  VMID: {voltage: 2.5 V, tolerance: 0.5%}
components:
  S1: {kind: signal_source, dc: [1.0 V, 2.0 V], ac_amplitude: 0 V, band: [0.01 Hz, 1 Hz],
       source_resistance: 5k, pins: {p: "<img src=x onerror=\\"window.__xss=2\\">", n: GND}}
  R1: {kind: resistor, value: 10k, tolerance: 1%, pins: {1: "<img src=x onerror=\\"window.__xss=2\\">", 2: "INV$1$"}}
  R2: {kind: resistor, value: 10k, tolerance: 1%, pins: {1: "INV$1$", 2: "</svg><script>window.__xss=3</script>"}}
  "U1<script>window.__xss=4</script>": {kind: opamp, part: AFE-GP1,
       pins: {in+: VMID, in-: "INV$1$", out: "</svg><script>window.__xss=3</script>", v+: VCC, v-: GND}}
loads:
  "</svg><script>window.__xss=3</script>": {resistance: 100k, capacitance: 10 pF}
"""


def hostile_design(folder: Path) -> Path:
    """A design whose name, nets and refdes carry HTML, script and mathtext: it must show as text."""
    path = folder / "hostile.yaml"
    path.write_text(HOSTILE, encoding="utf-8")
    return path


def html_of(*paths: Path, fail_on: str = "never") -> str:
    return render_html(review_files([str(p) for p in paths], fail_on=fail_on, detail="curves", discover=False))


class _Outline(HTMLParser):
    """Headings, ids, fragment links, scripts and figure captions of a page."""

    def __init__(self) -> None:
        super().__init__()
        self.headings: list[int] = []
        self.ids: list[str] = []
        self.links: list[tuple[str, str]] = []
        self.scripts = 0
        self.svgs: list[dict[str, str]] = []
        self.external: list[str] = []
        self._class = ""

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = {k: v or "" for k, v in attrs}
        if re.fullmatch(r"h[1-6]", tag):
            self.headings.append(int(tag[1]))
        if "id" in a:
            self.ids.append(a["id"])
        if tag == "a" and a.get("href", "").startswith("#"):
            self.links.append((a["href"][1:], a.get("class", "")))
        if tag == "script":
            self.scripts += 1
        if tag == "svg":
            self.svgs.append(a)
        for key in ("src", "href", "xlink:href"):
            if key in a and not a[key].startswith("#"):
                self.external.append(f"{tag} {key}={a[key]}")


def outline(text: str) -> _Outline:
    p = _Outline()
    p.feed(text)
    return p


@pytest.fixture(scope="module")
def pages() -> dict[str, str]:
    # every sample in one page (several designs: ids stay unique, links resolve), and one sample alone
    return {"all samples": html_of(*SAMPLES), "soil_probe_reader.yaml": html_of(ROOT / "sample_designs" /
                                                                                "soil_probe_reader.yaml")}


def test_page_is_self_contained_and_structured(pages: dict[str, str]) -> None:
    for name, text in pages.items():
        o = outline(text)
        assert o.external == [], name
        assert not re.search(r"https?://|@import|<link\b|<img\b|<iframe\b", text), name
        assert re.findall(r"url\(([^)]*)\)", text) == [u for u in re.findall(r"url\(([^)]*)\)", text)
                                                         if u.startswith("#")], name
        assert o.headings[0] == 1 and o.headings.count(1) == 1, name
        assert all(b - a <= 1 for a, b in zip(o.headings, o.headings[1:], strict=False)), (name, o.headings)
        assert len(o.ids) == len(set(o.ids)), name
        assert {target for target, _ in o.links} <= set(o.ids), name
        assert o.scripts == 1, name


def test_every_finding_links_to_its_stage_card_and_rule_page(pages: dict[str, str]) -> None:
    text = pages["soil_probe_reader.yaml"]
    for article in re.findall(r'<article class="finding.*?</article>', text, re.S):
        rule = re.search(r'href="#(rule-[^"]+)"', article).group(1)
        assert f'<article class="rule" id="{rule}">' in text
        stage = re.search(r'class="to-stage" href="#(stage-[^"]+)"', article).group(1)
        assert f'<section class="stage" id="{stage}"' in text
    # the common-mode finding on U2 (the follower) points at U2's card, the second stage of the first design
    afe301 = next(a for a in re.findall(r'<article class="finding.*?</article>', text, re.S)
                  if "headroom.input-common-mode" in a)
    assert 'href="#stage-1-2">stage U2' in afe301


def test_plots_carry_text_alternatives_with_the_key_numbers(pages: dict[str, str]) -> None:
    from afecheck.analysis import analyse
    from afecheck.model.load import load_design

    text = pages["soil_probe_reader.yaml"]
    o = outline(text)
    assert o.svgs and all(s.get("role") == "img" and s.get("aria-labelledby") in o.ids for s in o.svgs)
    for stage in analyse(load_design(ROOT / "sample_designs" / "soil_probe_reader.yaml")).stages:
        assert f"phase margin {stage.phase_margin_deg:.1f}°" in text
    captions = re.findall(r'<figcaption id="([^"]+)-caption">(.*?)</figcaption>', text, re.S)
    assert {c[0].rsplit("-", 1)[1] for c in captions} == {"loop", "closed", "headroom", "noise"}
    headroom = next(c for i, c in captions if i == "stage-1-2-headroom")
    # as the headroom.input-common-mode finding says: 3.80 V against the 3.25 V limit (AFE-GP1's input_cm_high
    # 1.5 V below the 4.75 V worst-case rail)
    assert "550 mV BEYOND high" in headroom and "3.80 V" in headroom and "3.25 V" in headroom


def test_colour_is_never_the_only_signal(pages: dict[str, str]) -> None:
    text = pages["all samples"]
    for article in re.findall(r'<article class="finding.*?</article>', text, re.S):
        sev = re.search(r'data-severity="(\w+)"', article).group(1)
        assert re.search(rf'<span class="sev sev-{sev}">[■▲●] {sev}</span>', article)


def test_same_input_gives_a_byte_identical_page(tmp_path: Path) -> None:
    # one run in a fresh interpreter, one here (after the other pages when the module runs whole)
    sample = ROOT / "sample_designs" / "vibration_follower.yaml"
    out = tmp_path / "r.html"
    subprocess.run([sys.executable, "-m", "afecheck", "check", "--fail-on", "never", "--no-config", "--format", "html",
                    "--output", str(out), str(sample)], check=True, capture_output=True)
    fresh = out.read_bytes()
    here = html_of(sample)
    assert fresh == here.encode("utf-8")
    assert b"<dc:date>" not in fresh and b"Date" not in fresh


def test_design_strings_are_escaped(tmp_path: Path) -> None:
    text = html_of(hostile_design(tmp_path))
    o = outline(text)
    assert o.scripts == 1  # our own filter script only
    assert "<img" not in text and "</svg><script>" not in text
    assert "&lt;script&gt;window.__xss = 1&lt;/script&gt;" in text
    assert "$\\frac{1}{0}$" in text  # shown as written, not typeset as mathematics
    assert len(o.ids) == len(set(o.ids))


def test_check_path_does_not_import_plotting_or_templates() -> None:
    sample = ROOT / "sample_designs" / "soil_probe_reader.yaml"
    code = ("import sys, io\nfrom afecheck.cli import main\n"
            "for fmt in ('text', 'json', 'sarif', 'junit', 'markdown'):\n"
            f"    main(['check', '--fail-on', 'never', '--format', fmt, {str(sample)!r}], io.StringIO(),\n"
            "         io.StringIO())\n"
            "print(sorted(m for m in sys.modules if m.split('.')[0] in ('matplotlib', 'jinja2', 'markupsafe')))\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"


@pytest.mark.parametrize("blocked", ["matplotlib", "jinja2"])
def test_missing_html_dependencies_exit_2_with_the_install_line(blocked: str, tmp_path: Path) -> None:
    sample = ROOT / "sample_designs" / "soil_probe_reader.yaml"
    out = tmp_path / "r.html"
    code = (f"import sys\nsys.modules[{blocked!r}] = None\nfrom afecheck.cli import main\n"
            f"sys.exit(main(['check', '--format', 'html', '--output', {str(out)!r}, {str(sample)!r}]))\n")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert proc.returncode == 2
    assert "--format html needs" in proc.stderr and "pip install 'afecheck[html]'" in proc.stderr
    assert "Traceback" not in proc.stderr and not out.exists()


def test_markdown_names_a_bypassed_gate_and_summarises_each_stage() -> None:
    sample = ROOT / "sample_designs" / "soil_probe_reader.yaml"
    out, err = io.StringIO(), io.StringIO()
    assert main(["check", "--fail-on", "never", "--format", "markdown", str(sample)], out, err) == 0
    md = out.getvalue()
    assert md.startswith("### afecheck: gate not applied (fail level never): 3 errors, 0 warnings open")
    assert "PASS" not in md
    lines = [ln for ln in md.splitlines() if ln.startswith("- U")]
    assert lines[0].startswith("- U1 (inverting, AFE-GP1): phase margin 70.6° at 577 kHz")
    # the common-mode and swing findings on U2 as margins: 3.80 V against 3.25 V (CM) and 3.75 V (swing)
    assert "input common mode 500 mV inside low, 550 mV BEYOND high" in lines[1]
    # the output range holds U2's 2 mV offset at both signs (issue 10): 0.198..3.802 V, so 4 mV less room low
    assert "output 176 mV inside low, 54.3 mV BEYOND high" in lines[1]
    gated = io.StringIO()
    assert main(["check", "--format", "markdown", str(sample)], gated, err) == 1
    assert gated.getvalue().startswith("### afecheck ❌ fails the gate")


def test_rule_page_markup_escapes_before_it_formats() -> None:
    page = ("# AFE999 demo\n\n## In the circuit\n\nA <script>x</script> and `<b>` and *soft* **hard**.\n\n"
            "| a | b |\n|---|---|\n| <i> | `c` |\n\n- one <u>\n  two\n\n```yaml\nk: <v>\n```\n")
    out = markup.to_html(page, 2, "rule-x")
    assert "<script>" not in out and "<i>" not in out and "<u>" not in out
    assert '<h3 id="rule-x-afe999-demo">AFE999 demo</h3>' in out and "<h4" in out
    assert "<code>&lt;b&gt;</code>" in out and "<em>soft</em>" in out and "<strong>hard</strong>" in out
    assert "<td>&lt;i&gt;</td>" in out and "<li>one &lt;u&gt; two</li>" in out
    assert "<pre><code>k: &lt;v&gt;</code></pre>" in out


def _luminance(hex_colour: str) -> float:
    """Relative luminance (W3C, WCAG 2.1, definition of relative luminance for sRGB)."""
    def channel(c: int) -> float:
        s = c / 255
        return s / 12.92 if s <= 0.04045 else ((s + 0.055) / 1.055) ** 2.4

    r, g, b = (int(hex_colour[i:i + 2], 16) for i in (1, 3, 5))
    return 0.2126 * channel(r) + 0.7152 * channel(g) + 0.0722 * channel(b)


def contrast(a: str, b: str) -> float:
    """WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05)."""
    hi, lo = sorted((_luminance(a), _luminance(b)), reverse=True)
    return (hi + 0.05) / (lo + 0.05)


def test_text_colours_have_sufficient_contrast() -> None:
    from afecheck.report import plots

    assert contrast("#000000", "#ffffff") == pytest.approx(21.0)  # the formula's own end points (WCAG 2.1)
    template = (ROOT / "afecheck" / "report" / "templates" / "report.html.j2").read_text(encoding="utf-8")
    colours = dict(re.findall(r"--([a-z]+): (#[0-9a-f]{6})", template))
    tints = re.findall(r"background: (#[0-9a-f]{6})", template)
    for name in ("ink", "muted", "error", "warning", "info", "pass", "link"):
        for background in ("#ffffff", *tints):
            # WCAG 2.1 success criterion 1.4.3: 4.5:1 for body text
            assert contrast(colours[name], background) >= 4.5, (name, background)
    for colour in (plots.INK, plots.LOOP, plots.PHASE, plots.LIMIT_WARN, plots.LIMIT_ERROR, plots.SIGNAL,
                   *(c for c, _ in plots.SERIES)):
        # WCAG 2.1 success criterion 1.4.11: 3:1 for graphical objects; the plot lines and labels meet 4.5:1
        assert contrast(colour, "#ffffff") >= 4.5, colour


def test_plots_stop_after_the_page_limit_but_numbers_stay(monkeypatch: pytest.MonkeyPatch) -> None:
    from afecheck.report import html

    monkeypatch.setattr(html, "MAX_PLOTTED_STAGES", 1)
    text = html_of(ROOT / "sample_designs" / "soil_probe_reader.yaml")
    assert 'id="stage-1-1-loop"' in text and 'id="stage-1-2-loop"' not in text
    assert text.count("Plots are drawn for the first 1 stages") == 1
    assert "<dt>phase margin</dt><dd>69.0°</dd>" in text  # U2's numbers are still on its card


def test_markdown_stage_lines_are_capped_for_a_comment() -> None:
    from afecheck.report import render
    from afecheck.report.data import DesignResult, Report, StageView
    from afecheck.report.markdown import MAX_ROWS

    views = tuple(StageView(f"U{k}", "P", "follower", (), "A", "B", "B", (f"U{k}",), "negative", phase_margin_deg=70.0,
                            crossover_hz=1e6) for k in range(MAX_ROWS + 3))
    md = render(Report(designs=(DesignResult("x.yaml", "d", stage_views=views),)), "markdown")
    assert md.count("phase margin 70.0° at 1.00 MHz") == MAX_ROWS and "…and 3 more stages" in md
