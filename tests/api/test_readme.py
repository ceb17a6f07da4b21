"""The README is true: its API tour is what the code returns, and it keeps the
two set-up commands and the cautions."""

from __future__ import annotations

from docs import tour


def test_api_tour_matches_the_code(client) -> None:
    readme = tour.README.read_text(encoding="utf-8")
    assert readme == tour.rewritten(readme, tour.render(client)), (
        "README.md's API tour is out of date: run `python -m docs.tour`")


def test_set_up_commands_and_cautions() -> None:
    readme = tour.README.read_text(encoding="utf-8")
    setup = readme.split("## Set up and run", 1)[1].split("##", 1)[0]
    commands = [line.split("#")[0].strip() for line in setup.splitlines() if line.startswith("    make")]
    assert commands == ["make run", "make test"]
    assert "does not replace, a qualified statistician" in readme


def test_the_csv_example_answers_as_its_json_twin(client) -> None:
    """The tour's CSV request (the unbalanced plate as an instrument export) gives the very answer of the
    JSON request beside it, provenance aside (the canonical request is the same, so even its hash is)."""
    twin = next(entry for entry in tour.TOUR if entry["path"] == tour.CSV_EXAMPLE["path"])
    as_json = client.post(twin["path"], json=twin["body"])
    as_csv = client.post(tour.CSV_EXAMPLE["path"] + tour.CSV_EXAMPLE["query"],
                         content=tour.CSV_EXAMPLE["csv"].encode(), headers={"content-type": "text/csv"})
    assert as_json.status_code == as_csv.status_code == 200, as_csv.text
    assert as_csv.json() == as_json.json()


def test_the_validation_report_shown_is_what_familywise_validate_prints() -> None:
    # Source of the figures: the NIST StRD files shipped with scipy (see familywise.validation).
    from familywise import validation

    printed = validation.report(validation.run()).splitlines()
    shown = tour.README.read_text(encoding="utf-8").split("`familywise validate` prints", 1)[1]
    shown = shown.split("```text\n", 1)[1].split("\n```", 1)[0].splitlines()
    assert len(shown) == len(printed)
    for ours, theirs in zip(shown, printed, strict=True):
        if theirs.startswith("source: "):  # the path of this machine's scipy installation
            assert ours == "source: .../site-packages/scipy/stats/tests/data/nist_anova"
            assert theirs.endswith("scipy/stats/tests/data/nist_anova")
        else:
            assert ours == theirs
