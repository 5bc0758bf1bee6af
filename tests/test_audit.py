"""The audit trail end to end, with the real command on the invented demo project.

The demo's numbers are never check values here: every expectation is about
consistency (a build against itself, a re-run, a check run, a new revision),
so the figures compared are read from the builds' own files.

Builds are shared by module-scoped fixtures (each demo build takes tens of
seconds): P01, a checker's override run P01-check, a re-execution kept by
``freerun verify --keep``, and the next revision P02 built after P01 is signed.
"""

from __future__ import annotations

import hashlib
import html
import io
import json
import re
import shutil
from contextlib import redirect_stderr, redirect_stdout
from pathlib import Path

import pytest

from calcs.cli import EXIT_BAD_INPUT, EXIT_CHECKS_FAILED, EXIT_OK, main
from calcs.paths import STAGES
from conftest import DEMO

pytestmark = pytest.mark.slow

ZONE = "Level 1 north"  # a zone of the demo project
OVERRIDE = f"zones.{ZONE}.floor_area=380"  # the demo file gives 420 m²
PREPARER, CHECKER, APPROVER = "A. Preparer", "B. Checker", "C. Approver"


def run(*args: object) -> tuple[int, str, str]:
    """The real command line, with its stdout and stderr."""
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        try:
            code = main([str(a) for a in args])
        except SystemExit as exc:  # argparse refuses a wrong option by exiting
            code = exc.code
    return code, out.getvalue(), err.getvalue()


def one_line_error(err: str) -> str:
    assert "Traceback" not in err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("freerun: ")
    return lines[0]


def text_of(page: str) -> str:
    """Visible text of an HTML page, tags stripped, entities decoded, spaces collapsed."""
    return re.sub(r"\s+", " ", html.unescape(re.sub(r"<[^>]+>", " ", page)))


def tree_digests(folder: Path) -> dict[str, str]:
    """SHA-256 of every file under a folder (the test's own, independent of calcs.audit)."""
    return {p.relative_to(folder).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def leaves(node, path=()):
    """(path tuple, value) for every leaf of results.json; lists of numbers split by index."""
    if isinstance(node, dict):
        for key, value in node.items():
            yield from leaves(value, (*path, key))
    elif isinstance(node, list) and all(isinstance(v, (int, float)) or v is None for v in node):
        for index, value in enumerate(node):
            yield (*path[:-1], f"{path[-1]}[{index}]"), value
    else:
        yield path, node


def load(path: Path):
    return json.loads(path.read_text(encoding="utf-8"))


# --------------------------------------------------------------------------- shared builds


@pytest.fixture(scope="module")
def builds(tmp_path_factory):
    """P01 and a checker's override run, both into the default build folders."""
    root = tmp_path_factory.mktemp("audit")
    project = root / "demo_project"  # a copy: every build of this module sees the same project file
    shutil.copytree(DEMO, project)
    original = (project / "project.toml").read_bytes()
    with pytest.MonkeyPatch.context() as mp:
        mp.chdir(root)
        code, _, err = run("build", project, "--quiet")
        assert code == EXIT_OK, err
        code, _, err = run("build", project, "--set", OVERRIDE, "--quiet")
        assert code == EXIT_OK, err
    assert (project / "project.toml").read_bytes() == original, "a check run never alters the project file"
    jobs = root / "build" / "DEMO-001"
    return {"root": root, "project": project, "jobs": jobs, "p01": jobs / "P01", "check": jobs / "P01-check"}


@pytest.fixture(scope="module")
def signing(builds):
    """The sign-off sequence on P01, with each refusal on the way; returns every step's outcome."""
    p01 = builds["p01"]
    steps = {
        "checked_first": run("sign", p01, "--role", "checked", "--name", CHECKER),
        "prepared": run("sign", p01, "--role", "prepared", "--name", PREPARER, "--note", "issued for checking"),
        "after_prepared": (p01 / "report.html").read_text(encoding="utf-8"),
        "checked_by_preparer": run("sign", p01, "--role", "checked", "--name", "  a.  PREPARER "),
        "checked": run("sign", p01, "--role", "checked", "--name", CHECKER),
        "checked_again": run("sign", p01, "--role", "checked", "--name", "D. Other"),
        "approved_by_checker": run("sign", p01, "--role", "approved", "--name", CHECKER),
        "check_run": run("sign", builds["check"], "--role", "prepared", "--name", PREPARER),
    }
    return steps


@pytest.fixture(scope="module")
def verified(builds, signing):
    """Full verification of the signed P01, keeping the re-executed build."""
    p01 = builds["p01"]
    before = tree_digests(p01)
    keep = builds["root"] / "rerun"
    outcome = run("verify", p01, "--keep", keep, "--quiet")
    return {"outcome": outcome, "before": before, "after": tree_digests(p01), "rerun": keep}


@pytest.fixture(scope="module")
def next_revision(builds, signing):
    """A refused rebuild of the signed P01, then P02 with --new-revision."""
    p01 = builds["p01"]
    before = tree_digests(p01)
    with pytest.MonkeyPatch.context() as mp:
        mp.chdir(builds["root"])
        refused = run("build", builds["project"], "--quiet")
        refused_out = run("build", builds["project"], "--out", p01, "--quiet")
        after = tree_digests(p01)
        code, _, err = run("build", builds["project"], "--new-revision", "P02", "--quiet")
        assert code == EXIT_OK, err
    return {"refused": refused, "refused_out": refused_out, "before": before, "after": after,
            "p02": builds["jobs"] / "P02"}


# --------------------------------------------------------------------------- manifest


def test_manifest_binds_inputs_and_results(builds):
    p01 = builds["p01"]
    manifest = load(p01 / "manifest.json")
    inputs = manifest["inputs_sha256"]
    # every file in inputs/ is listed with its digest: project file, weather file, resolved project
    assert set(inputs) == {p.relative_to(p01 / "inputs").as_posix() for p in (p01 / "inputs").rglob("*") if p.is_file()}
    for name in ("project.toml", "weather/port_merrow_invented.epw", "project.resolved.json"):
        assert inputs[name] == hashlib.sha256((p01 / "inputs" / name).read_bytes()).hexdigest(), name
    assert inputs["project.toml"] == hashlib.sha256((builds["project"] / "project.toml").read_bytes()).hexdigest()
    assert manifest["results_sha256"] == hashlib.sha256((p01 / "results.json").read_bytes()).hexdigest()
    outputs = manifest["outputs_sha256"]
    for rel in ("results.json", "notebooks/climate.ipynb", "climate/daily.csv", "climate/results.json"):
        assert outputs[rel] == hashlib.sha256((p01 / rel).read_bytes()).hexdigest(), rel
    assert re.fullmatch(r"[0-9a-f]{64}", manifest["digest"])
    assert manifest["tool_version"] and manifest["overrides"] == [] and manifest["revision_override"] is None
    assert manifest["started"] <= manifest["finished"]
    assert "numpy" in manifest["packages"] and manifest["python"]


def test_check_run_records_overrides_on_cover(builds):
    check = builds["check"]
    manifest = load(check / "manifest.json")
    assert manifest["overrides"] == [OVERRIDE]
    assert load(check / "inputs" / "overrides.json") == {"overrides": [OVERRIDE]}
    resolved = load(check / "inputs" / "project.resolved.json")
    assert [z["floor_area"] for z in resolved["zones"] if z["name"] == ZONE] == [380]
    cover = text_of((check / "report.html").read_text(encoding="utf-8").split('id="contents"')[0])
    assert f"CHECK RUN with overrides: {OVERRIDE}" in cover
    assert manifest["digest"] != load(builds["p01"] / "manifest.json")["digest"]


# --------------------------------------------------------------------------- compare


def test_compare_lists_exactly_the_override_and_the_results_that_moved(builds, tmp_path):
    p01, check = builds["p01"], builds["check"]
    page, data = tmp_path / "cmp" / "compare.html", tmp_path / "compare.json"
    code, out, err = run("compare", p01, check, "--html", page, "--json", data)
    assert code == EXIT_OK, err
    comparison = load(data)
    assert comparison["inputs"] == [{"key": f"zones.{ZONE}.floor_area", "old": "420", "new": "380"}]
    assert comparison["files"] == []  # same weather file; the project file is compared parameter by parameter
    assert f"zones.{ZONE}.floor_area: 420 -> 380" in out

    old = dict(leaves(load(p01 / "results.json")))
    new = dict(leaves(load(check / "results.json")))
    assert set(old) == set(new)
    moved = {".".join(k) for k in old if old[k] != new[k]}
    rows = {row["key"]: row for row in comparison["results"]}
    assert set(rows) == moved and moved, "exactly the results that differ are listed"
    assert not any(key.startswith("climate.") for key in rows), "the climate does not depend on floor area"
    assert not any(key.startswith("loads.Level 1 south.") for key in rows), "another zone's loads do not move"
    gains = ("loads", ZONE, "annual_internal_gains_kWh")
    row = rows[".".join(gains)]
    assert row["old"] == old[gains] and row["new"] == new[gains] and row["headline"] is True
    assert row["change"] == new[gains] - old[gains]
    assert row["pct"] == pytest.approx(100 * (new[gains] - old[gains]) / old[gains], rel=1e-12)
    assert row["pct"] < 0  # less floor, less internal gain
    assert f"{'.'.join(gains)}: " in out

    shown = text_of(page.read_text(encoding="utf-8"))
    assert "<script" not in page.read_text(encoding="utf-8").lower()
    assert f"zones.{ZONE}.floor_area 420 380" in shown
    assert ".".join(gains) in shown and "Results that moved" in shown


def test_compare_fail_above_exits_1_only_above_the_threshold(builds):
    p01, check = builds["p01"], builds["check"]
    # headline results, read from the two results files: numbers directly under a key, not counts of hours
    old = dict(leaves(load(p01 / "results.json")))
    new = dict(leaves(load(check / "results.json")))
    headline = [k for k in old if isinstance(old[k], (int, float)) and not isinstance(old[k], bool)
                and not k[-1].endswith("]") and not k[-1].endswith("hours")
                and isinstance(new[k], (int, float)) and old[k] != new[k]]
    assert headline
    code, out, err = run("compare", p01, check, "--fail-above", "0")
    assert code == EXIT_CHECKS_FAILED
    assert one_line_error(err).startswith(f"freerun: {len(headline)} headline result(s) moved by more than 0 %: ")
    comparison_code, out, _ = run("compare", p01, p01, "--fail-above", "0")
    assert comparison_code == EXIT_OK, "a build compared with itself moves nothing"
    assert "results that moved: 0 of" in out and "no headline result moved by more than 0 %" in out
    # the largest headline move decides the exit code, and is named first
    if all(old[k] != 0 for k in headline):
        biggest = max(headline, key=lambda k: abs((new[k] - old[k]) / old[k]))
        assert err.split(": ", 2)[2].startswith(".".join(biggest))
        largest = max(abs(100 * (new[k] - old[k]) / abs(old[k])) for k in headline)
        assert run("compare", p01, check, "--fail-above", f"{largest * 1.001}")[0] == EXIT_OK
        assert run("compare", p01, check, "--fail-above", f"{largest * 0.999}")[0] == EXIT_CHECKS_FAILED
    else:  # a headline result moved away from 0: no threshold lets that pass
        assert run("compare", p01, check, "--fail-above", "1e12")[0] == EXIT_CHECKS_FAILED


def test_compare_refuses_bad_usage(builds, tmp_path):
    for args, fragment in (
        (("compare", builds["p01"], tmp_path / "missing"), "no such build folder"),
        (("compare", builds["p01"], tmp_path), "not a freerun build folder (no manifest.json)"),
        (("compare", builds["p01"], builds["check"], "--fail-above", "-1"), "'-1' is not a percentage"),
    ):
        code, _, err = run(*args)
        assert code == EXIT_BAD_INPUT
        assert fragment in one_line_error(err)


# --------------------------------------------------------------------------- signing


def test_signing_in_order_moves_status_and_shows_on_cover(builds, signing):
    p01 = builds["p01"]
    assert signing["prepared"][0] == EXIT_OK and "status DRAFT" in signing["prepared"][1]
    assert signing["checked"][0] == EXIT_OK and "status CHECKED" in signing["checked"][1]
    assert "Status: DRAFT" in text_of(signing["after_prepared"])
    digest = load(p01 / "manifest.json")["digest"]
    record = load(p01 / "signatures.json")
    assert [(s["role"], s["name"]) for s in record["signatures"]] == [("prepared", PREPARER), ("checked", CHECKER)]
    assert all(s["digest"] == digest for s in record["signatures"])
    assert record["signatures"][0]["note"] == "issued for checking"
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\+00:00", record["signatures"][1]["time"])
    page = (p01 / "report.html").read_text(encoding="utf-8")
    cover = text_of(page.split('id="contents"')[0])
    assert "Status: CHECKED" in cover
    assert f"Prepared {PREPARER} issued for checking {record['signatures'][0]['time'][:10]} {digest[:16]}" in cover
    assert f"Checked {CHECKER} {record['signatures'][1]['time'][:10]} {digest[:16]}" in cover
    assert "Approved not signed" in cover
    assert "CHECKED" in text_of(page.split('class="page-foot"')[1])


def test_signing_refusals(builds, signing):
    for step, fragment in (
        ("checked_first", "cannot sign as checked before the build is signed as prepared"),
        ("checked_by_preparer", "already signed this build as prepared; one person signs one role"),
        ("checked_again", f"already signed as checked by {CHECKER}"),
        ("approved_by_checker", "already signed this build as checked; one person signs one role"),
        ("check_run", "a check run (overrides: "),
    ):
        code, _, err = signing[step]
        assert code == EXIT_BAD_INPUT, step
        assert fragment in one_line_error(err), step
    roles = [s["role"] for s in load(builds["p01"] / "signatures.json")["signatures"]]
    assert roles == ["prepared", "checked"], "no refused signature was recorded"
    assert not (builds["check"] / "signatures.json").exists()


def test_sign_refuses_bad_usage(builds, tmp_path):
    for args, fragment in (
        (("sign", tmp_path / "missing", "--role", "prepared", "--name", PREPARER), "no such build folder"),
        (("sign", builds["p01"], "--role", "boss", "--name", PREPARER), "invalid choice: 'boss'"),
        (("sign", builds["p01"], "--role", "approved", "--name", "   "), "give the signatory's name"),
    ):
        code, _, err = run(*args)
        assert code == EXIT_BAD_INPUT
        assert fragment in one_line_error(err)


# --------------------------------------------------------------------------- verify and determinism


def test_verify_passes_and_never_touches_the_build(verified):
    code, out, err = verified["outcome"]
    assert code == EXIT_OK, out + err
    assert "files: all" in out and "results.json identical" in out and "verify: PASSED" in out
    assert verified["after"] == verified["before"], "verify wrote nothing into the build"


def test_two_builds_give_identical_results_and_tables(builds, verified):
    p01, rerun = builds["p01"], verified["rerun"]
    assert (p01 / "results.json").read_bytes() == (rerun / "results.json").read_bytes()
    # the stages' data tables (exports/ holds renderings of the report, which carry the signatures)
    tables = sorted(p.relative_to(p01).as_posix() for stage in STAGES for p in (p01 / stage).glob("*.csv"))
    assert "climate/daily.csv" in tables
    for rel in tables:
        assert (p01 / rel).read_bytes() == (rerun / rel).read_bytes(), rel
    assert load(p01 / "manifest.json")["digest"] == load(rerun / "manifest.json")["digest"]
    manifest = load(p01 / "manifest.json")
    for rel in ["results.json", *tables]:
        text = (p01 / rel).read_text(encoding="utf-8")
        assert str(builds["root"]) not in text, rel  # no absolute paths
        assert manifest["started"] not in text and manifest["finished"] not in text, rel  # no build times


@pytest.fixture(scope="module")
def tampered(builds, signing, tmp_path_factory):
    """A copy of the signed P01 with one byte of a data table changed."""
    copy = tmp_path_factory.mktemp("tampered") / "P01"
    shutil.copytree(builds["p01"], copy)
    table = copy / "climate" / "daily.csv"
    data = bytearray(table.read_bytes())
    at = data.index(b".", 200) + 1  # a digit after a decimal point
    data[at] = ord("0") + (data[at] - ord("0") + 1) % 10
    table.write_bytes(bytes(data))
    return copy


def test_verify_names_a_tampered_table(tampered):
    code, out, err = run("verify", tampered, "--quiet")
    assert code == EXIT_CHECKS_FAILED, out + err
    assert "TAMPERED climate/daily.csv: SHA-256 differs from manifest.json" in out
    assert out.count("TAMPERED") == 1, "only the changed file is named"
    assert "verify: FAILED" in out


def test_sign_refused_on_a_tampered_build(tampered):
    before = tree_digests(tampered)
    code, _, err = run("sign", tampered, "--role", "approved", "--name", APPROVER)
    assert code == EXIT_BAD_INPUT
    line = one_line_error(err)
    assert "sign refused" in line and "climate/daily.csv" in line and "nothing was signed" in line
    assert tree_digests(tampered) == before


def test_verify_catches_an_added_file_and_an_edited_manifest(builds, tmp_path):
    added = tmp_path / "added"
    shutil.copytree(builds["check"], added)
    (added / "loads" / "extra.csv").write_text("a,b\n1,2\n", encoding="utf-8")
    code, out, _ = run("verify", added, "--files-only")
    assert code == EXIT_CHECKS_FAILED
    assert "loads/extra.csv: not listed in manifest.json (a file was added)" in out

    edited = tmp_path / "edited"
    shutil.copytree(builds["check"], edited)
    manifest = load(edited / "manifest.json")
    (edited / "climate" / "monthly.csv").write_text("forged\n", encoding="utf-8")
    manifest["outputs_sha256"]["climate/monthly.csv"] = hashlib.sha256(b"forged\n").hexdigest()
    (edited / "manifest.json").write_text(json.dumps(manifest), encoding="utf-8")
    code, out, _ = run("verify", edited, "--files-only")
    assert code == EXIT_CHECKS_FAILED
    assert "manifest.json: 'digest' does not match its file digests" in out

    code, out, _ = run("verify", builds["check"], "--files-only")
    assert code == EXIT_OK and "re-execution not run" in out


def test_verify_refuses_bad_usage(builds, tmp_path):
    for args, fragment in (
        (("verify", tmp_path / "missing"), "no such build folder"),
        (("verify", tmp_path), "not a freerun build folder"),
        (("verify", builds["p01"], "--keep", tmp_path), "already exists"),
    ):
        code, _, err = run(*args)
        assert code == EXIT_BAD_INPUT
        assert fragment in one_line_error(err)


# --------------------------------------------------------------------------- revisions


def test_signed_build_is_never_rebuilt(next_revision):
    for key in ("refused", "refused_out"):
        code, _, err = next_revision[key]
        assert code == EXIT_BAD_INPUT, key
        line = one_line_error(err)
        assert "this build is signed (prepared by A. Preparer, checked by B. Checker)" in line
        assert "--new-revision" in line
    assert next_revision["after"] == next_revision["before"], "the signed build is untouched"


def test_new_revision_has_its_own_folder_and_changes_section(builds, next_revision):
    p02 = next_revision["p02"]
    manifest = load(p02 / "manifest.json")
    assert manifest["revision"] == "P02" and manifest["revision_override"] == "P02" and manifest["overrides"] == []
    assert load(p02 / "inputs" / "project.resolved.json")["project"]["revision"] == "P02"
    assert b'revision = "P01"' in (builds["project"] / "project.toml").read_bytes(), "the project file is unchanged"
    assert not (p02 / "signatures.json").exists()
    changes = manifest["changes_since_previous"]
    # compared with P01, not with the later check run P01-check
    assert changes["a"]["revision"] == "P01" and changes["a"]["overrides"] == []
    assert changes["a"]["digest"] == load(builds["p01"] / "manifest.json")["digest"]
    assert changes["inputs"] == [{"key": "project.revision", "old": '"P01"', "new": '"P02"'}]
    assert changes["results"] == [], "the same inputs move no result"
    page = (p02 / "report.html").read_text(encoding="utf-8")
    text = text_of(page)
    assert "Status: DRAFT" in text
    assert '<a href="#changes">Changes since revision P01</a>' in page
    section = text_of(page.split('id="changes"')[1].split("</section>")[0])
    assert 'project.revision "P01" "P02"' in section and "No result moved" in section


def test_decision_log_keeps_the_revision_a_decision_entered(builds, next_revision):
    resolved = load(next_revision["p02"] / "inputs" / "project.resolved.json")
    decision = resolved["decisions"][0]
    assert decision["revision"] == ""  # the demo file leaves it blank
    assert load(builds["p01"] / "manifest.json")["decisions_entered"] == {decision["id"]: "P01"}
    assert load(next_revision["p02"] / "manifest.json")["decisions_entered"] == {decision["id"]: "P01"}
    page = (next_revision["p02"] / "report.html").read_text(encoding="utf-8")
    log = text_of(page.split('id="decisions"')[1].split("</section>")[0])
    results = load(next_revision["p02"] / "results.json")
    relied = " ".join(f"{key} = {results['climate'][key.split('.')[1]]:,.1f}" for key in decision["relies_on"])
    assert f"{decision['id']} {decision['date']} {decision['by']}" in log
    assert f"{relied} P01" in log, "the values relied on, then the revision it entered"
