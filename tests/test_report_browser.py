"""The HTML report of every demo case, rendered in a real browser (headless Chromium).

At an 800 px wide window: no element wider than the page, no sideways scrolling, the
design-basis block within the first screen; printed on A4: a sensible page count and nothing
wider than the paper; and the file is self-contained (every image loads, no request leaves
the file).  A first-screen PNG of a report is kept under tests/artefacts/ only when one of
its checks fails.  A copy of a report with a 2000 px table and an outside image shows that
the checks catch what they are meant to catch.

800 px is a narrow laptop or tablet window (common practice, no source); A4 is ISO 216.
"""
from __future__ import annotations

import pathlib
from concurrent.futures import ThreadPoolExecutor

import pytest

from eqdesign.solve.casefile.reader import load_case
from eqdesign.solve.report.output import output_files
from eqdesign.solve.report.run import run_case

import browser

ROOT = pathlib.Path(__file__).resolve().parents[1]
ARTEFACTS = pathlib.Path(__file__).resolve().parent / "artefacts"
DEMOS = sorted(p.stem for p in (ROOT / "cases").glob("*.yaml"))
WIDTH, HEIGHT = 800, 1000                  # the window [CSS px]; the first screen is its height
DESIGN_BASIS = "#design-basis"             # id of the report's design-basis block
PAGES = (1, 40)                            # a sensible printed length [pages]

CHROMIUM = browser.find_chromium()
pytestmark = pytest.mark.skipif(
    CHROMIUM is None, reason="Chromium is not installed: `apt-get install -y chromium` "
                             "(Debian package; .ci/run installs it)")

# Today's report puts wide tables in sideways-scrolling boxes; these tables are wider than the
# 800 px page (752 px of content) or the 717 px printable on A4 (measured with this harness).
# Until the report is restyled to fit, those checks are expected to fail.  Remove an entry
# when its report fits.
WIDE_TODAY = "wide tables scroll sideways until the report is restyled (issue 12)"
KNOWN_WIDE = {
    "ammonia_loop_pressure_options": "5 tables 828-1433 px (target questions 1433 px); on A4 "
                                     "also the conversion sensitivity table (735 px)",
    "methanol_restricted_reactions": "target questions 930 px, data provenance 881 px; on A4 "
                                     "also the K table (727 px)",
    "shift_converters": "target questions 906 px, staged beds 838 px, data provenance 881 px",
    "steam_reformer_carbon": "target questions 938 px, data provenance 881 px, K table 764 px "
                             "in a 752 px box; on A4 also the outlet composition (731 px)",
    "sulfuric_acid_converter": "target questions 930 px, staged beds 924 px, "
                               "data provenance 871 px",
}


@pytest.fixture(scope="module")
def reports(tmp_path_factory):
    """Every demo case run at reduced resolution, its report.html written to a scratch folder
    and handed to Chromium at once, so the browser measures one report while the next is
    computed.  Returns name -> (path of the report, future of its LayoutFacts)."""
    folder = tmp_path_factory.mktemp("browser_reports")
    jobs = {}
    with ThreadPoolExecutor(max_workers=1) as pool:
        for name in DEMOS:
            files = output_files(run_case(load_case(ROOT / "cases" / f"{name}.yaml"), coarse=True))
            assert "report.html" in files, f"{name}: the demo case writes no report"
            path = folder / f"{name}.html"
            path.write_bytes(files["report.html"])
            jobs[name] = path, pool.submit(browser.render, path, width=WIDTH, height=HEIGHT,
                                           selector=DESIGN_BASIS, executable=CHROMIUM)
        yield jobs


@pytest.fixture(scope="module", params=DEMOS)
def rendered(request, reports) -> tuple[str, browser.LayoutFacts]:
    """One demo report as rendered in Chromium at 800 x 1000 px (and printed on A4)."""
    name = request.param
    return name, reports[name][1].result()


def _fail(request, name: str, facts: browser.LayoutFacts, message: str) -> None:
    """Keep the first screen under tests/artefacts/ (unless failure is expected) and fail."""
    if request.node.get_closest_marker("xfail") is None:
        ARTEFACTS.mkdir(exist_ok=True)
        (ARTEFACTS / f"{name}-first-screen.png").write_bytes(facts.screenshot)
        message += f"\nfirst screen kept in {ARTEFACTS / (name + '-first-screen.png')}"
    pytest.fail(f"{name}: {message}", pytrace=False)


def check_fits_page(facts: browser.LayoutFacts) -> str | None:
    """Why the report does not fit the page width, or None."""
    problems = []
    if facts.too_wide:
        lines = "\n  ".join(o.describe() for o in facts.too_wide)
        problems.append(f"{len(facts.too_wide)} element(s) wider than the "
                        f"{facts.viewport_width:.0f} px page:\n  {lines}")
    if facts.scrolls_sideways:
        lines = "\n  ".join(o.describe() for o in facts.scrolls_sideways)
        problems.append(f"{len(facts.scrolls_sideways)} box(es) whose content is wider than "
                        f"the box (scrolled sideways or cut off):\n  {lines}")
    return "\n".join(problems) or None


def check_fits_paper(facts: browser.LayoutFacts) -> str | None:
    """Why the printed report is cut off or shrunk on A4, or None."""
    problems = []
    if facts.print_too_wide:
        lines = "\n  ".join(o.describe() for o in facts.print_too_wide)
        problems.append(f"{len(facts.print_too_wide)} element(s) wider than the printable "
                        f"{facts.print_width:.0f} px of A4 (cut off or shrunk on paper):"
                        f"\n  {lines}")
    if facts.print_clipped:
        lines = "\n  ".join(o.describe() for o in facts.print_clipped)
        problems.append(f"{len(facts.print_clipped)} box(es) cut off on paper (content wider "
                        f"than the box, which cannot scroll in print):\n  {lines}")
    return "\n".join(problems) or None


def check_self_contained(facts: browser.LayoutFacts) -> str | None:
    """Why the report is not one self-contained file, or None."""
    if facts.requests:
        return "asks for outside resources (refused): " + ", ".join(facts.requests)
    if facts.failed_images:
        return "images that did not load: " + ", ".join(facts.failed_images)
    return None


def _expect_wide(request, name: str) -> None:
    if name in KNOWN_WIDE:
        request.applymarker(pytest.mark.xfail(reason=f"{WIDE_TODAY}: {KNOWN_WIDE[name]}",
                                              strict=False))


def test_window_is_800_px(rendered):
    """The harness measures at the window size asked for (else every other check is moot)."""
    _, facts = rendered
    assert (facts.viewport_width, facts.viewport_height) == (WIDTH, HEIGHT)


def test_no_sideways_scroll_of_the_page(request, rendered):
    name, facts = rendered
    if facts.scroll_width > facts.viewport_width:
        _fail(request, name, facts, f"the page scrolls sideways: content "
                                    f"{facts.scroll_width:.0f} px in a "
                                    f"{facts.viewport_width:.0f} px window")


def test_no_element_wider_than_the_page(request, rendered):
    name, facts = rendered
    _expect_wide(request, name)
    problem = check_fits_page(facts)
    if problem:
        _fail(request, name, facts, problem)


def test_prints_on_a4_without_cutting_anything_off(request, rendered):
    name, facts = rendered
    _expect_wide(request, name)
    problem = check_fits_paper(facts)
    if problem:
        _fail(request, name, facts, problem)


def test_printed_page_count_is_sensible(request, rendered):
    name, facts = rendered
    if not PAGES[0] <= facts.pdf_pages <= PAGES[1]:
        _fail(request, name, facts, f"printed on {facts.pdf_pages} A4 pages; "
                                    f"expected {PAGES[0]} to {PAGES[1]}")


def test_self_contained_and_every_figure_loads(request, rendered):
    name, facts = rendered
    problem = check_self_contained(facts)
    if facts.images == 0:
        problem = "no figure in the report"
    if problem:
        _fail(request, name, facts, problem)


@pytest.mark.xfail(reason="the design-basis block (#design-basis) is not in the report yet "
                          "(issue 12 restyle)", strict=False)
def test_design_basis_within_the_first_screen(request, rendered):
    name, facts = rendered
    p = facts.placement
    if not p.found:
        _fail(request, name, facts, f"no element {p.selector} in the report")
    if not facts.in_first_screen:
        _fail(request, name, facts, f"{p.selector} spans {p.top:.0f}..{p.bottom:.0f} px; the first "
                                    f"screen ends at {facts.viewport_height:.0f} px")


# --- the checks catch what they should --------------------------------------------------------

SABOTAGE = ('<table id="widened" style="width:2000px">'
            '<tr><td>deliberately widened</td></tr></table>'
            '<div id="clipping" style="overflow:hidden; width:300px">'
            '<table style="width:600px"><tr><td>cut off</td></tr></table></div>'
            '<img id="outside" alt="outside figure" src="http://192.0.2.7/figure.png">')
# 192.0.2.0/24 is TEST-NET-1, never routed (RFC 5737); the request is refused by the harness anyway


@pytest.fixture(scope="module")
def sabotaged(reports, tmp_path_factory) -> browser.LayoutFacts:
    """A copy of one demo report with a 2000 px wide table, a table cut off by its box and an
    image from outside."""
    text = reports["shift_converters"][0].read_text(encoding="utf-8")
    assert "</body>" in text
    copy = tmp_path_factory.mktemp("sabotaged") / "widened.html"
    copy.write_text(text.replace("</body>", SABOTAGE + "</body>", 1), encoding="utf-8")
    return browser.render(copy, width=WIDTH, height=HEIGHT, executable=CHROMIUM)


def test_a_widened_table_fails_the_width_checks(sabotaged):
    problem = check_fits_page(sabotaged)
    assert problem is not None and "<table#widened>" in problem
    widened = [o for o in sabotaged.too_wide if o.ident == "#widened"][0]
    assert widened.width >= 2000
    assert sabotaged.scroll_width >= 2000          # the page itself now scrolls sideways
    paper = check_fits_paper(sabotaged)
    assert paper is not None and "<table#widened>" in paper


def test_content_cut_off_in_a_box_fails_the_width_checks(sabotaged):
    """A 600 px table in a 300 px box that hides its overflow: within the page, yet cut off."""
    assert [o.ident for o in sabotaged.scrolls_sideways if o.tag == "div"][-1:] == ["#clipping"]
    assert "<div#clipping>" in check_fits_page(sabotaged)
    assert "<div#clipping>" in check_fits_paper(sabotaged)


def test_an_outside_image_fails_the_self_contained_check(sabotaged):
    assert sabotaged.requests == ("http://192.0.2.7/figure.png",)
    assert "http://192.0.2.7/figure.png" in sabotaged.failed_images
    problem = check_self_contained(sabotaged)
    assert problem is not None and "192.0.2.7" in problem


def test_pdf_page_count_reader():
    """The page counter reads ``/Type /Page`` objects (ISO 32000-1, 7.7.3.3), not ``/Pages``."""
    pdf = (b"%PDF-1.4\n1 0 obj << /Type /Catalog /Pages 2 0 R >> endobj\n"
           b"2 0 obj << /Type /Pages /Kids [3 0 R 4 0 R] /Count 2 >> endobj\n"
           b"3 0 obj << /Type /Page /Parent 2 0 R >> endobj\n"
           b"4 0 obj <</Type/Page/Parent 2 0 R>> endobj\n%%EOF\n")
    assert browser.pdf_page_count(pdf) == 2
    assert browser.pdf_page_count(b"<< /Type /Pages /Count 7 >>") == 7
