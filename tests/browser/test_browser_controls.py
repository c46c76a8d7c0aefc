"""The controls in a real browser: arrow keys step away and back exactly, a log slider's
handle tells its value in the unit, number boxes hold a bounded number of digits."""
import re

import pytest

from _browser import OUT, open_app, require_browser, served_app

pytestmark = pytest.mark.browser

# The exact value of a control, from its label's title ("r_in = 0.34 au — inner radius…"),
# which the page writes from the slider's position (12 significant digits).
_EXACT = "(css) => document.querySelector('.' + css + ' .dx-param-label').getAttribute('title')"
_HANDLE = """(css) => { const h = document.querySelector('.' + css + ' .noUi-handle');
  return {label: h.getAttribute('aria-label'), now: h.getAttribute('aria-valuenow'),
          text: h.getAttribute('aria-valuetext'), min: h.getAttribute('aria-valuemin'),
          max: h.getAttribute('aria-valuemax')}; }"""
_CURVES = ("() => Array.from(document.querySelectorAll('.dx-fig-vis2 svg path.line'))"
           ".map(p => p.getAttribute('d') || '').join('|')")


@pytest.fixture(scope="module")
def page():
    require_browser()
    with served_app() as url, open_app(url) as page:
        page.wait_for_timeout(800)
        yield page


def _exact(page, css):
    title = page.evaluate(_EXACT, css)
    return title.split(" — ")[0]


# The number box the kernel writes after it took a step: within 0.2 % of the exact value
# in the title (the box rounds to the parameter's digits; one step moves 0.7 % or more).
_SETTLED = """(css) => {
  const t = document.querySelector('.' + css + ' .dx-param-label').getAttribute('title').split(' — ')[0];
  const exact = parseFloat(t.split(' = ')[1]);
  const box = parseFloat(document.querySelector('.' + css + ' input').value);
  return Math.abs(box - exact) <= 2e-3 * Math.abs(exact);
}"""


def _press(page, css, key):
    """Press ``key`` on the handle; returns the new exact value once the kernel has taken it.

    Waiting for the kernel's number box keeps presses from overlapping a busy kernel's
    replies (typing into a box the kernel is still rewriting loses the typed text).
    """
    before = _exact(page, css)
    page.locator(f".{css} .noUi-handle").first.focus()
    page.keyboard.press(key)
    page.wait_for_function(f"(b) => ({_EXACT})('{css}').split(' — ')[0] !== b", arg=before, timeout=30_000)
    page.wait_for_function(_SETTLED, arg=css, timeout=30_000)
    return _exact(page, css)


@pytest.mark.parametrize("css, start, one_step", [
    ("dx-ring-t_in", "T_in = 1480 K", "T_in = 1490 K"),               # was 1480 → 1495.5 → 1483.25
    ("dx-ring-r_in", "r_in = 0.34 au", "r_in = 0.347919617375 au"),   # was 0.34 → 0.3476 → 0.3371
    ("dx-inclination", "i = 41 °", "i = 41.5 °"),
])
def test_arrow_right_then_left_returns_exactly(page, css, start, one_step):
    assert _exact(page, css) == start
    curves = page.evaluate(_CURVES)
    assert _press(page, css, "ArrowRight") == one_step
    assert _press(page, css, "ArrowLeft") == start
    # The model drawn from the state is the starting one again, to the last digit drawn.
    try:
        page.wait_for_function(f"(c) => ({_CURVES})() === c", arg=curves, timeout=30_000)
    except Exception:  # noqa: BLE001 - say what differs instead
        now = page.evaluate(_CURVES).split("|")
        was = curves.split("|")
        differ = [k for k, (a, b) in enumerate(zip(was, now)) if a != b]
        box = page.evaluate("(css) => document.querySelector('.' + css + ' input').value", css)
        pytest.fail(f"{css}: after right and left the V² figure's paths {differ} (of {len(was)} before, "
                    f"{len(now)} now) differ from the start; lengths before {[len(a) for a in was]}, "
                    f"now {[len(b) for b in now]}; title {_exact(page, css)!r}, box {box!r}")


def test_log_slider_handle_tells_value_in_unit(page):
    h = page.evaluate(_HANDLE, "dx-ring-r_in")
    # noUiSlider alone reports log10: aria-valuenow "-0.5", aria-valuetext "-0.468…".
    assert h["now"] == "0.34" and h["text"] == "0.34 au"
    assert "r_in" in h["label"] and "au" in h["label"]
    assert float(h["min"]) == pytest.approx(0.02, rel=0.05) and float(h["max"]) == pytest.approx(200, rel=0.05)
    _press(page, "dx-ring-r_in", "ArrowRight")
    h = page.evaluate(_HANDLE, "dx-ring-r_in")
    assert float(h["now"]) == pytest.approx(0.347919617375, rel=1e-9) and h["text"] == "0.3479 au"
    _press(page, "dx-ring-r_in", "ArrowLeft")
    assert page.evaluate(_HANDLE, "dx-ring-r_in")["text"] == "0.34 au"
    # Linear sliders too carry the unit, and their exact value (noUiSlider rounds to 0.1).
    h = page.evaluate(_HANDLE, "dx-extended_fraction")
    assert h["now"] == "0.04" and h["text"] == "0.04"
    assert page.evaluate(_HANDLE, "dx-ring-t_in")["text"] == "1480 K"


def _significant(text):
    mantissa = text.lower().split("e")[0].replace("-", "").replace(".", "").lstrip("0")
    return len(mantissa.rstrip("0")) if mantissa else 1


def test_number_boxes_hold_bounded_digits(page):
    box = page.locator(".dx-ring-r_in input").first
    box.fill("0.347612345678")
    box.press("Enter")
    page.wait_for_function(f"() => ({_EXACT})('dx-ring-r_in').includes('0.347612345678')", timeout=30_000)
    page.wait_for_function("() => document.querySelector('.dx-ring-r_in input').value === '0.3476'",
                           timeout=30_000)
    boxes = page.evaluate("""() => Array.from(document.querySelectorAll('.dx-param input[type=number]'))
        .filter(i => i.offsetParent !== null)
        .map(i => ({css: i.closest('.dx-param').className, value: i.value,
                    scroll: i.scrollWidth, client: i.clientWidth}))""")
    assert len(boxes) >= 15
    for b in boxes:
        assert re.fullmatch(r"-?[0-9.]+(e-?[0-9]+)?", b["value"]), b
        assert _significant(b["value"]) <= 4, b
        assert b["scroll"] <= b["client"], b                 # nothing hidden past the box's edge
    OUT.mkdir(exist_ok=True)
    page.screenshot(path=str(OUT / "controls.png"), full_page=False)
