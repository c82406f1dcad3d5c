"""The research line pages: what they say for 0, 1, 2 and many results, and who may see or change
a line."""

from __future__ import annotations

import html

import pytest
from django.urls import reverse

from ledger.lines import services
from ledger.lines.models import ResearchLine
from tests.factories import collecting_study, sealed_study
from tests.lines.builders import study_with_result, t_row

pytestmark = pytest.mark.django_db

# (t, N, published) for a line of many results: the significant ones are the published ones.
MANY = [
    (3.1, 40, True),
    (2.7, 56, True),
    (2.4, 60, True),
    (3.6, 36, True),
    (0.4, 150, False),
    (-0.6, 120, None),
    (0.9, 200, False),
    (0.2, 90, None),
]


def line_of(member, specs, name="Hum and length"):
    studies = [
        study_with_result(member=member, row=t_row(t=t, n=n), published=published, title=f"Study {i}")
        for i, (t, n, published) in enumerate(specs)
    ]
    return services.line_create(member=member, name=name, measure="smd", studies=studies)


def page(client, member, line, **query) -> str:
    client.force_login(member.user)
    response = client.get(line.get_absolute_url(), data=query)
    assert response.status_code == 200
    text = response.content.decode()
    # The strict Content-Security-Policy allows no inline styles or scripts.
    assert 'style="' not in text and "<script>" not in text
    return html.unescape(text)


def chart_urls(line) -> list[str]:
    kwargs = {"lab_slug": line.lab.slug, "line_code": line.code}
    return [reverse("lines:funnel", kwargs=kwargs), reverse("lines:pcurve", kwargs=kwargs)]


def test_a_line_without_results_says_nothing_can_be_computed_yet(client, investigator):
    line = services.line_create(member=investigator, name="Empty", measure="smd")
    text = page(client, investigator, line)
    assert "The whole record cannot be pooled yet. Pooling needs at least 2 usable results; there are none." in text
    assert "No funnel plot: it needs at least 2 usable results; there are none." in text
    assert "Egger's test needs at least 3 usable results; there are none." in text
    assert "The p-curve needs at least 3 results significant at p < .05; there are none." in text
    assert "<img" not in text


def test_one_result_is_listed_but_not_pooled(client, investigator):
    line = line_of(investigator, [(2.2, 80, True)])
    text = page(client, investigator, line)
    assert "Pooling needs at least 2 usable results; there is 1." in text
    assert "No funnel plot: it needs at least 2 usable results; there is 1." in text
    assert "t = 2.2 with N = 80" in text
    assert "<img" not in text


def test_two_results_are_pooled_but_too_few_for_egger_and_the_p_curve(client, investigator):
    line = line_of(investigator, [(2.2, 80, True), (0.3, 120, False)])
    text = page(client, investigator, line)
    assert "Only 1 of the 2 usable results is published, so the published record cannot be pooled" in text
    assert "all 2 registered results pool to g = " in text
    assert "Egger's test needs at least 3 usable results; there are 2." in text
    assert "The p-curve needs at least 3 results significant at p < .05; there is 1." in text
    funnel, pcurve = chart_urls(line)
    assert f'src="{funnel}"' in text and f'src="{pcurve}"' not in text


def test_many_results_show_every_diagnostic_with_its_reading(client, investigator):
    line = line_of(investigator, MANY)
    waiting = collecting_study(member=investigator, title="Still collecting")
    services.line_update(
        member=investigator, line=line, name=line.name, measure="smd", studies=[*line.studies.all(), waiting]
    )
    text = page(client, investigator, line)
    assert "The published record overstates the effect by" in text
    assert "(random effects, DerSimonian-Laird)" in text
    funnel, pcurve = chart_urls(line)
    assert f'src="{funnel}"' in text and f'src="{pcurve}"' in text
    assert 'alt="Funnel plot of 8 results' in text and 'alt="p-curve of 4 significant results' in text
    assert "With 8 results the test is rarely informative: it needs about 10 (Sterne et al. 2011; from memory)" in text
    assert "significant of 8 observed" in text
    assert "rules of Simonsohn, Simmons & Nelson 2015, from memory" in text
    assert "not proof of misconduct" in text
    assert f"{waiting.code}</code></a> Still collecting" in text
    assert "Data collection is under way: no result is sealed yet." in text


def test_reml_is_a_choice_on_the_page(client, investigator):
    line = line_of(investigator, MANY)
    assert "Random effects (REML τ²)" in page(client, investigator, line, tau2="REML")
    assert "Random effects (DerSimonian-Laird τ²)" in page(client, investigator, line, tau2="nonsense")


def test_charts_are_svg_documents_served_from_their_own_urls(client, reader, investigator):
    line = line_of(investigator, MANY)
    client.force_login(reader.user)
    for url in chart_urls(line):
        first, second = client.get(url), client.get(url)
        assert first.status_code == 200
        assert first["Content-Type"] == "image/svg+xml"
        assert first["Content-Security-Policy"] == "default-src 'none'; style-src 'unsafe-inline'"
        assert first.content == second.content
        assert first.content.startswith(b"<?xml")


def test_the_line_list_shows_the_lab_lines(client, reader, investigator, outsider):
    line_of(investigator, MANY[:2], name="Ours")
    services.line_create(member=outsider, name="Theirs", measure="smd")
    client.force_login(reader.user)
    text = client.get(reverse("lines:list", kwargs={"lab_slug": reader.lab.slug})).content.decode()
    assert "Ours" in text and "Theirs" not in text
    assert "New research line" not in text  # a reader cannot create one


# --- access --------------------------------------------------------------------------------------------


def line_urls(line) -> dict[str, str]:
    kwargs = {"lab_slug": line.lab.slug, "line_code": line.code}
    return {name: reverse(f"lines:{name}", kwargs=kwargs) for name in ("line", "edit", "delete", "funnel", "pcurve")}


def edit_body(line, studies, **changes) -> dict:
    return {
        "name": changes.get("name", line.name),
        "description": "",
        "measure": changes.get("measure", line.measure),
        "studies": [study.code for study in studies],
    }


def test_an_outsider_gets_404_for_every_line_url(client, investigator, outsider):
    line = line_of(investigator, MANY[:3])
    client.force_login(outsider.user)
    for url in line_urls(line).values():
        assert client.get(url).status_code == 404
        assert client.post(url, data=edit_body(line, [])).status_code == 404
    # A line code of another lab under the outsider's own lab is a 404 too.
    foreign = reverse("lines:line", kwargs={"lab_slug": outsider.lab.slug, "line_code": line.code})
    assert client.get(foreign).status_code == 404


def test_a_reader_can_view_but_not_change(client, reader, investigator):
    line = line_of(investigator, MANY[:3])
    urls = line_urls(line)
    client.force_login(reader.user)
    assert client.get(urls["line"]).status_code == 200
    assert client.get(urls["edit"]).status_code == 403
    assert client.post(urls["edit"], data=edit_body(line, [], name="Renamed")).status_code == 403
    assert client.post(urls["delete"]).status_code == 403
    create = reverse("lines:create", kwargs={"lab_slug": reader.lab.slug})
    assert client.post(create, data=edit_body(line, [], name="A reader's line")).status_code == 403
    line.refresh_from_db()
    assert line.name == "Hum and length" and line.studies.count() == 3
    assert ResearchLine.objects.count() == 1


def test_an_investigator_creates_edits_and_deletes_a_line(client, investigator, other_investigator):
    study = study_with_result(member=investigator, row=t_row(t=2.0, n=100))
    colleague_study = sealed_study(member=other_investigator, title="A colleague's study")
    client.force_login(investigator.user)
    create = reverse("lines:create", kwargs={"lab_slug": investigator.lab.slug})
    assert client.get(create).status_code == 200
    response = client.post(
        create, data={"name": "Hum", "description": "Low hum, line length.", "measure": "smd", "studies": [study.code]}
    )
    line = ResearchLine.objects.get()
    assert response.status_code == 302 and response["Location"] == line.get_absolute_url()
    assert list(line.studies.all()) == [study]

    urls = line_urls(line)
    # Lines are lab-wide: an investigator may add a study of the lab they are not on.
    response = client.post(urls["edit"], data=edit_body(line, [study, colleague_study], measure="fisher_z"))
    assert response.status_code == 302
    line.refresh_from_db()
    assert line.measure == "fisher_z" and set(line.studies.all()) == {study, colleague_study}

    assert client.post(urls["delete"]).status_code == 302
    assert not ResearchLine.objects.exists()


def test_a_study_code_of_another_lab_is_refused_by_the_form(client, investigator, outsider):
    line = line_of(investigator, MANY[:2])
    theirs = sealed_study(member=outsider)
    client.force_login(investigator.user)
    response = client.post(line_urls(line)["edit"], data=edit_body(line, [theirs]))
    assert response.status_code == 200
    assert "Select a valid choice" in response.content.decode()
    assert line.studies.count() == 2


def test_a_duplicate_name_is_shown_on_the_name_field(client, investigator):
    line_of(investigator, [], name="Taken")
    client.force_login(investigator.user)
    create = reverse("lines:create", kwargs={"lab_slug": investigator.lab.slug})
    response = client.post(create, data={"name": "taken", "measure": "smd"})
    assert response.status_code == 200
    assert "already has a line called" in html.unescape(response.content.decode())
    assert ResearchLine.objects.count() == 1


def test_anonymous_visitors_are_sent_to_sign_in(client, investigator):
    line = line_of(investigator, [])
    response = client.get(line.get_absolute_url())
    assert response.status_code == 302 and response["Location"].startswith(reverse("login"))
