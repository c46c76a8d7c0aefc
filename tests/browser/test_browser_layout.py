"""The explorer fits the room it is given: at 1000 px and 1500 px wide, every page shows its
labels, buttons and figures whole.

A narrow notebook output (JupyterLab beside its file browser gives about 1070 px) cut tab
labels and buttons with an ellipsis, clipped long figure titles and put the third radial
profile past the output's edge. Here the served page is that wide, every tab of both tab
bars is opened, and every visible element must lie inside the explorer and every tab label,
button, label and figure title must be whole.
"""
import pytest

from _browser import OUT, open_app, require_browser, served_app

pytestmark = pytest.mark.browser

#: Every tab of both tab bars; the figure pages last, so each is measured with its figures drawn.
TABS = ("model", "data", "pins & session", "starting point", "χ² grid", "derived quantities",
        "SED & spectrum", "disk structure", "interferometry")

# Elements past the explorer's right edge, and texts cut short. The starting point's table
# (the start page's own fixed columns) may be wider than a narrow page: it must then scroll
# inside its page, never past it.
_MEASURE = """() => {
  const root = document.querySelector('.dx-root');
  const right = root.getBoundingClientRect().right;
  const shown = e => e.offsetParent !== null && e.getBoundingClientRect().width > 0;
  const name = e => ((e.className && e.className.baseVal !== undefined ? e.className.baseVal : e.className)
                     || e.tagName).toString().slice(0, 70) + ' "' + (e.textContent || '').trim().slice(0, 30) + '"';
  const scrolls = e => { for (let a = e.parentElement; a && a !== root; a = a.parentElement) {
      const s = getComputedStyle(a).overflowX;
      if ((s === 'auto' || s === 'scroll') && a.getBoundingClientRect().right <= right + 0.5) return true; }
    return false; };
  const past = [], cut = [];
  // HTML elements and whole figures (what an SVG draws outside itself is clipped, e.g. an
  // axis' fixed ticks beyond the domain).
  for (const e of root.querySelectorAll('*')) {
    if (!(e instanceof HTMLElement) || !shown(e)) continue;
    const r = e.getBoundingClientRect().right;
    if (r > right + 0.5 && !(e.closest('.dx-export-panel') && scrolls(e))) past.push(name(e) + ' right ' + Math.round(r));
  }
  for (const e of root.querySelectorAll('.lm-TabBar-tabLabel, button, .widget-label, .widget-label-basic')) {
    if (shown(e) && e.scrollWidth > e.clientWidth + 0.5) cut.push(name(e) + ' ' + e.scrollWidth + ' > ' + e.clientWidth);
  }
  for (const t of root.querySelectorAll('.bqplot text.mainheading')) {
    const svg = t.closest('svg').getBoundingClientRect(), b = t.getBoundingClientRect();
    if (b.width > 0 && (b.left < svg.left - 0.5 || b.right > svg.right + 0.5))
      cut.push('figure title "' + t.textContent + '" ' + Math.round(b.width) + ' px in ' + Math.round(svg.width));
  }
  return {past: past.slice(0, 20), cut: cut.slice(0, 20), width: root.getBoundingClientRect().width};
}"""


@pytest.fixture(scope="module")
def voila_url():
    require_browser()
    with served_app() as url:
        yield url


@pytest.mark.parametrize("width", [1000, 1500])
def test_every_page_fits(voila_url, width):
    with open_app(voila_url, viewport=(width, 1000)) as page:
        page.wait_for_timeout(500)
        found = {}
        for tab in TABS:
            page.locator(".dx-root .lm-TabBar-tab", has_text=tab).first.click()
            if tab in ("SED & spectrum", "disk structure"):
                css = "dx-fig-silicate" if tab == "SED & spectrum" else "dx-fig-profile-intensity"
                page.wait_for_function(f"() => document.querySelectorAll('.{css} svg path.line').length > 0",
                                       timeout=30_000)
            page.wait_for_timeout(600)
            res = page.evaluate(_MEASURE)
            assert res["width"] <= width
            if res["past"] or res["cut"]:
                found[tab] = res
        OUT.mkdir(exist_ok=True)
        page.screenshot(path=str(OUT / f"layout_{width}.png"), full_page=True)
    assert not found, found
