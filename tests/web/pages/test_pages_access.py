"""Every page answers, every field has a label, and the palette has enough contrast (WCAG 2.1 AA)."""

from __future__ import annotations

import re
from html.parser import HTMLParser
from pathlib import Path

from pages_site import Site
from pages_lab import PEOPLE, failing_upload, passing_upload
from service import services as uc

CSS = Path(__file__).resolve().parents[3] / "service" / "web" / "static" / "bandgate.css"


class _Fields(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.fields: list[str] = []
        self.labels: set[str] = set()

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        a = dict(attrs)
        if tag == "label" and a.get("for"):
            self.labels.add(a["for"] or "")
        if tag in ("input", "select", "textarea") and a.get("type") not in ("hidden", "submit", "button"):
            self.fields.append(a.get("id") or f"<{tag} name={a.get('name')} without id>")


def _unlabelled(html: str) -> list[str]:
    p = _Fields()
    p.feed(html)
    return [f for f in p.fields if f not in p.labels]


def test_every_page_answers_and_labels_every_field(lab_site: Site) -> None:
    from datetime import date

    tech = uc.get_actor(lab_site.engine, PEOPLE["tech"].username)
    code = uc.receive_lot(lab_site.engine, tech, material_code="TOL-01", supplier_name="Northwind Solvents",
                          supplier_lot="NS-7", containers=2, received_on=date(2026, 12, 1)).code
    for i, data in ((1, passing_upload()), (2, failing_upload())):
        uc.record_measurement(lab_site.engine, tech, lot_code=code, container=i, instrument_code="FTIR-1",
                              data=data, file_name=f"c{i}.csv")
    lot = uc.get_lot(lab_site.engine, code)
    spec = uc.effective_spec(lab_site.engine, "TOL-01")
    ref = uc.list_references(lab_site.engine, material_code="TOL-01")[0]
    check = uc.instrument_checks(lab_site.engine, "FTIR-1")[0]
    pages = {
        "tech": ["/", "/?q=NS-7", "/lots/receive", f"/lots/{code}", f"/measurements/{lot.measurements[0].id}",
                 f"/measurements/{lot.measurements[1].id}?difference=0", "/materials", "/materials/TOL-01",
                 f"/specs/{spec.id}", f"/references/{ref.id}", "/instruments", "/instruments/FTIR-1",
                 f"/instruments/FTIR-1/checks/{check.id}"],
        "sup": [f"/lots/{code}/review", f"/lots/{code}/review/reject",
                f"/lots/{code}/review/invalidate?measurement={lot.measurements[1].id}", "/audit"],
        "qa": [f"/lots/{code}/disposition", "/materials/TOL-01/specs/new", "/materials/TOL-01/references/new",
               "/audit?record_type=lot"],
    }
    for who, paths in pages.items():
        client = lab_site.client(who)
        for path in paths:
            r = client.get(path)
            assert r.status_code == 200, (who, path, r.status_code, r.text[:500])
            html = r.text
            assert PEOPLE[who].printed_name in html and "Bandgate version" in html, path
            assert "advice to the quality unit" in html, path
            assert not _unlabelled(html), (path, _unlabelled(html))


def _luminance(hex_colour: str) -> float:
    c = [int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)]
    c = [x / 12.92 if x <= 0.03928 else ((x + 0.055) / 1.055) ** 2.4 for x in c]
    return 0.2126 * c[0] + 0.7152 * c[1] + 0.0722 * c[2]


def _contrast(a: str, b: str) -> float:
    la, lb = sorted((_luminance(a), _luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def test_state_and_text_colours_meet_wcag_aa_on_every_background() -> None:
    # WCAG 2.1 success criterion 1.4.3: at least 4.5:1 for normal text (W3C formula for relative luminance)
    css = CSS.read_text(encoding="utf-8")
    var = dict(re.findall(r"--([\w-]+):\s*(#[0-9a-fA-F]{6})", css))
    backgrounds = ["#ffffff", var["paper"], var["ok-bg"], var["bad-bg"], var["warn-bg"]]
    for name in ("ink", "ink-soft", "accent", "ok", "bad", "warn", "wait", "hold", "none"):
        for bg in backgrounds:
            assert _contrast(var[name], bg) >= 4.5, (name, bg, round(_contrast(var[name], bg), 2))
    assert round(_contrast("#000000", "#ffffff"), 1) == 21.0  # the formula's own check value


class _Links(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.hrefs: list[str] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        href = dict(attrs).get("href") if tag == "a" else None
        if href and href.startswith("/") and not href.startswith("//"):
            self.hrefs.append(href.split("#")[0])


def test_no_page_shows_a_link_its_reader_may_not_follow(lab_site: Site) -> None:
    """Crawl from the work queue as each role: every link shown answers 200 (never 403, 404 or 500)."""
    from datetime import date

    tech = uc.get_actor(lab_site.engine, PEOPLE["tech"].username)
    code = uc.receive_lot(lab_site.engine, tech, material_code="TOL-01", supplier_name="Northwind Solvents",
                          supplier_lot="NS-8", containers=1, received_on=date(2026, 12, 1)).code
    uc.record_measurement(lab_site.engine, tech, lot_code=code, container=1, instrument_code="FTIR-1",
                          data=failing_upload(), file_name="c1.csv")
    for who in ("tech", "sup", "qa"):
        client = lab_site.client(who)
        seen: set[str] = set()
        todo = ["/", f"/lots/{code}"]
        while todo and len(seen) < 60:
            path = todo.pop(0)
            if path in seen or path.startswith(("/logout", "/static/")) or path.endswith("/file"):
                continue
            seen.add(path)
            r = client.get(path)
            assert r.status_code == 200, (who, path, r.status_code)
            links = _Links()
            links.feed(r.text)
            todo.extend(h for h in links.hrefs if h not in seen)
        assert len(seen) > 8, (who, sorted(seen))
