"""Browser walk with a real headless Chromium against a real server and a real SQLite database.

With JavaScript switched off in the browser, the technician signs in → receives a lot → uploads a passing and a failing spectrum → sees the verdicts
and the plot; supervisor signs in → reviews the failed lot → signs the rejection; the printed lot
record carries the signature manifestation (21 CFR 11.50: printed name, date and time, meaning).
Screenshots of every step go to ``test-output/browser/`` (and, with BANDGATE_SCREENSHOTS=docs, the
README's small PNGs to ``docs/screenshots/``).
"""

from __future__ import annotations

import os
import re
from pathlib import Path

import pytest

from browser_harness import OUTPUT, REPO, chromium, chromium_path, live_server
from pages_site import SECRET, needs_readers
from pages_lab import PASSWORD, PEOPLE, failing_upload, passing_upload, seed_lab
from service.store.engine import make_engine
from service.store.migrations import upgrade

pytestmark = [pytest.mark.browser, pytest.mark.slow]

DOCS_SHOTS = REPO / "docs" / "screenshots"


def _shot(page, name: str, *, full: bool = True) -> Path:  # type: ignore[no-untyped-def]
    OUTPUT.mkdir(parents=True, exist_ok=True)
    path = OUTPUT / f"{name}.png"
    page.screenshot(path=str(path), full_page=full)
    return path


def _doc_shot(page, name: str, selector: str | None = None) -> None:  # type: ignore[no-untyped-def]
    """A small PNG for the README (the viewport, or one element), when asked for."""
    if os.environ.get("BANDGATE_SCREENSHOTS") != "docs":
        return
    DOCS_SHOTS.mkdir(parents=True, exist_ok=True)
    path = DOCS_SHOTS / f"{name}.png"
    if selector:
        page.locator(selector).first.screenshot(path=str(path))
    else:
        page.screenshot(path=str(path), full_page=False)
    from PIL import Image  # installed with matplotlib

    with Image.open(path) as img:  # a 256-colour palette keeps README images small and sharp
        img.convert("RGB").quantize(colors=256).save(path, optimize=True)
    assert path.stat().st_size < 150_000, f"{path} is {path.stat().st_size} bytes; keep README images small"


def _sign_in(page, base: str, who: str) -> None:  # type: ignore[no-untyped-def]
    page.goto(base + "/")
    assert "/login" in page.url  # not signed in: sent to the sign-in page
    page.get_by_label("User id").fill(PEOPLE[who].username)
    page.get_by_label("Password").fill(PASSWORD)
    page.get_by_role("button", name="Sign in").click()
    page.wait_for_url(base + "/")
    header = page.locator("header").inner_text()
    assert PEOPLE[who].printed_name in header and PEOPLE[who].roles[0] in header


def _sign_out(page) -> None:  # type: ignore[no-untyped-def]
    page.get_by_role("button", name="Sign out").click()
    page.wait_for_load_state()


def _upload(page, base: str, lot: str, container: int, name: str, data: bytes) -> None:  # type: ignore[no-untyped-def]
    page.goto(f"{base}/lots/{lot}/upload?container={container}")
    page.get_by_label("Instrument").select_option("FTIR-1")
    page.get_by_label("Spectrum file").set_input_files({"name": name, "mimeType": "text/csv", "buffer": data})
    page.get_by_role("button", name="Upload and evaluate").click()
    page.wait_for_url(re.compile(r".*/measurements/\d+$"))


def test_technician_to_supervisor_walk_with_printed_record(tmp_path: Path) -> None:
    executable = chromium_path()
    needs_readers()
    db_url = f"sqlite:///{tmp_path / 'walk.db'}"
    upgrade(db_url)
    engine = make_engine(db_url)
    seed_lab(engine)
    engine.dispose()

    with live_server(db_url, secret=SECRET, log=OUTPUT / "server.log") as base, chromium(executable) as browser:
        # JavaScript off: every essential action of the walk must work with plain forms and links.
        context = browser.new_context(viewport={"width": 1180, "height": 860},  # type: ignore[attr-defined]
                                      java_script_enabled=False)
        page = context.new_page()
        page.set_default_timeout(30_000)

        # --- technician -------------------------------------------------------------------
        _sign_in(page, base, "tech")
        assert "advice to the quality unit" in page.inner_text("body")
        _shot(page, "01-technician-queue")

        page.get_by_role("link", name="Receive a lot").click()
        page.get_by_label("Material").select_option("TOL-01")
        page.get_by_label("Supplier", exact=True).select_option("Northwind Solvents")
        page.get_by_label("Supplier's lot number").fill("NS-24-0917")
        page.get_by_label("Containers received").fill("2")
        page.get_by_role("button", name="Show the sampling plan first").click()
        assert "Why:" in page.inner_text("aside")
        _shot(page, "02-receive-plan-preview")
        page.get_by_role("button", name="Receive into quarantine").click()
        page.wait_for_url(re.compile(r".*/lots/[^/]+\?received=1$"))
        lot = page.url.split("/lots/")[1].split("?")[0]
        body = page.inner_text("body")
        assert "received, in quarantine" in body and "every container" in body
        _shot(page, "03-lot-received")

        _upload(page, base, lot, 1, "toluene-container-1.csv", passing_upload())
        assert "Conforms to the specification" in page.inner_text(".verdict")
        plot = page.locator("svg.plot")
        assert plot.count() == 1 and "from high to low" in (plot.get_attribute("aria-label") or "")
        _shot(page, "04-evaluation-pass")
        _doc_shot(page, "evaluation-plot", "figure.plot-figure")

        _upload(page, base, lot, 2, "toluene-container-2.csv", failing_upload())
        assert "Does not conform" in page.inner_text(".verdict")
        assert page.locator("tr.row-bad").count() >= 1  # the failed criterion, shown in words and shape
        _shot(page, "05-evaluation-fail")

        page.goto(f"{base}/lots/{lot}")
        assert "failed, awaiting review" in page.inner_text(".verdict")
        _shot(page, "06-lot-failed")
        _sign_out(page)

        # --- supervisor ---------------------------------------------------------------------
        _sign_in(page, base, "sup")
        queue = page.locator("#q-awaiting_review")
        assert lot in queue.inner_text()
        _doc_shot(page, "work-queue")
        queue.get_by_role("link", name=lot).click()
        page.get_by_role("link", name="Review the failure").click()
        assert page.locator("svg.plot").count() >= 1  # the evidence, with its plot
        _shot(page, "07-review")
        page.evaluate("document.querySelector('h1').scrollIntoView()")
        _doc_shot(page, "review")
        page.get_by_role("link", name=re.compile(r"Reject lot")).click()

        # The signing step states the meaning before it asks for the password.
        meaning = page.locator("#meaning")
        assert "I reject this lot" in meaning.inner_text()
        order = page.evaluate("""() => {
            const m = document.getElementById('meaning'), p = document.getElementById('password');
            return m.compareDocumentPosition(p) & Node.DOCUMENT_POSITION_FOLLOWING; }""")
        assert order, "the meaning must come before the password field"
        page.get_by_label("Reason for the rejection").fill(
            "Container 2 matches heptanes, not toluene: aromatic ring band at 1495 cm⁻¹ absent; mix-up at supplier.")
        page.get_by_label("Your user id").fill(PEOPLE["sup"].username)
        page.get_by_label("Your password").fill(PASSWORD)
        _shot(page, "08-sign-rejection")
        _doc_shot(page, "signing")
        page.get_by_role("button", name="Sign: reject lot").click()
        page.wait_for_url(re.compile(rf".*/lots/{lot}\?signed=rejected$"))
        assert "rejected" in page.inner_text(".verdict")

        # --- the printed lot record ---------------------------------------------------------------
        page.emulate_media(media="print")
        printed = page.evaluate("() => document.body.innerText")
        assert "Lot record" in printed
        assert PEOPLE["sup"].printed_name in printed  # printed name
        assert re.search(r"signed\s+rejected\s+on\s+\d{4}-\d{2}-\d{2} \d{2}:\d{2}:\d{2} UTC", printed)  # meaning, time
        assert "I reject this lot" in printed  # the meaning in words
        assert "changed or set aside after first entry" in printed  # Annex 11 §8.2 line
        assert "advice to the quality unit" in printed  # the caution
        assert "Receive a lot" not in printed  # navigation is not printed
        _shot(page, "09-printed-lot-record")
        _doc_shot(page, "printed-lot-record")
        page.pdf(path=str(OUTPUT / "lot-record-A4.pdf"), format="A4")
        page.pdf(path=str(OUTPUT / "lot-record-Letter.pdf"), format="Letter")
        assert (OUTPUT / "lot-record-A4.pdf").stat().st_size > 10_000
