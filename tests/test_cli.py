"""The `edgefit` command as a user runs it (subprocess: exit codes, stdout, stderr)."""
import json
import re
import subprocess
import sys
from pathlib import Path

import pytest

from tests.synthetic import single_edge

ROOT = Path(__file__).resolve().parent.parent


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "edgefit", *args], capture_output=True,
                          text=True, cwd=cwd or ROOT, timeout=300)


@pytest.fixture(scope="module")
def film_csv(tmp_path_factory):
    # synthetic: a direct-gap film, Eg 2.45 eV, Eu 35 meV, 1500 nm, 0.2 % noise in T
    spec = single_edge(2.45, 0.035, 0.5, 1500, 0.002, seed=4)
    p = tmp_path_factory.mktemp("cli") / "film.csv"
    lines = ["Sample: CLI film", "Thickness: 1500 nm", "Wavelength (nm),%T"]
    lines += [f"{x:.1f},{100 * y:.4f}" for x, y in zip(spec.x[::-1], spec.y[::-1])]
    p.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return p


def test_fit_prints_a_table_with_gap_and_caution(film_csv):
    r = run("fit", str(film_csv), "--thickness", "1.5um")
    assert r.returncode == 0, r.stderr
    gap = re.search(r"direct    gap  (\d\.\d{3}) ± ", r.stdout)
    assert gap and abs(float(gap.group(1)) - 2.45) <= 0.01, r.stdout   # synthetic truth
    assert "transition     direct, strong evidence" in r.stdout
    assert "Urbach energy" in r.stdout and "model-dependent estimate" in r.stdout


def test_fit_json_follows_the_contract(film_csv):
    r = run("fit", str(film_csv), "--thickness", "1500nm", "--json")
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stdout)
    assert set(doc) == {"version", "results"}
    res = doc["results"][0]
    for key in ("source", "column", "sample", "transition", "gaps", "tauc", "urbach", "film",
                "flags"):
        assert key in res
    assert set(res["tauc"]) == {"direct-allowed", "indirect-allowed", "direct-forbidden",
                                "indirect-forbidden"}
    assert res["transition"] == "direct" and res["sample"] == "CLI film"
    gap = res["gaps"][0]
    assert set(gap) >= {"kind", "eg_ev", "eg_err_ev", "window_ev", "method"}
    assert abs(gap["eg_ev"] - 2.45) < 0.01 and gap["eg_err_ev"] > 0
    assert set(res["urbach"]) >= {"eu_mev", "eu_err_mev", "window_ev"}
    assert res["film"]["thickness_nm"] == pytest.approx(1500)
    assert all(set(f) == {"code", "message"} for f in res["flags"])
    assert "data" not in res


@pytest.mark.parametrize("args,needle", [
    (["fit", "no-such-file.csv"], "no such file: no-such-file.csv"),
    (["fit", "{film}", "--thickness", "400"], "has no unit"),
    (["fit", "{film}", "--window", "3:2"], "lower energy first"),
    (["fit", "{film}", "--range", "9:12"], "holds no point of the data"),
    (["fit", "{film}", "--range", "1.5"], "--range must be LO:HI in eV"),
    (["fit", "{film}", "--quantity", "colour"], "colour"),
])
def test_input_errors_exit_2_with_one_line(film_csv, args, needle):
    r = run(*[a.replace("{film}", str(film_csv)) for a in args])
    assert r.returncode == 2
    assert r.stderr.count("\n") == 1 and r.stderr.startswith("edgefit: error: ")
    assert needle in r.stderr and "Traceback" not in r.stderr


def test_report_option_writes_one_html_file(film_csv, tmp_path):
    out = tmp_path / "film.html"
    r = run("fit", str(film_csv), "--thickness", "1500nm", "--report", str(out))
    assert r.returncode == 0, r.stderr
    html = out.read_text(encoding="utf-8")
    assert "plotly" in html.lower() and "CLI film" in html
    assert '<script src="http' not in html and "<link href=\"http" not in html


def test_batch_writes_reports_summary_and_csv(film_csv, tmp_path):
    other = tmp_path / "broken.csv"
    other.write_text("Wavelength (nm),%T\n", encoding="utf-8")
    r = run("batch", str(film_csv), str(other), "--out", str(tmp_path / "out"),
            "--thickness", "1500nm")
    assert r.returncode == 0, r.stderr
    assert "1 spectra fitted, 1 files failed" in r.stdout
    assert "broken.csv" in r.stderr
    out = tmp_path / "out"
    assert (out / "summary.html").is_file() and (out / "summary.csv").is_file()
    doc = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert len(doc["results"]) == 1 and doc["errors"][0]["source"] == "broken.csv"


def test_demo_fits_every_file_and_matches_its_truths(tmp_path):
    # the demo scenario is invented (spectra_demo/); its truths are recorded by the script that
    # generated it (synthetic)
    r = run("demo", "--out", str(tmp_path / "demo"))
    assert r.returncode == 0, r.stderr
    entries = []
    for m in sorted((ROOT / "spectra_demo").glob("manifest*.json")):
        entries += json.loads(m.read_text(encoding="utf-8"))
    for ent in entries:
        assert ent["file"] in r.stdout
    assert (tmp_path / "demo" / "summary.html").is_file()
    # every file with a truth gives it back (test_demo_file_gives_back_its_truth)


def _demo_entries():
    out = []
    for m in sorted((ROOT / "spectra_demo").glob("manifest*.json")):
        out += [e for e in json.loads(m.read_text(encoding="utf-8"))
                if e.get("truth", {}).get("transition")]
    return out


# Known misses of the edge analysis on the demo (open work, kept visible): the first few
# readings above the noise floor of a thick film's transmittance make a short spurious rise
# below the edge, whose tangent is then read as an indirect gap.
_KNOWN = {"LK-ZTO-550-thick_T.dat": "a spurious rise at the noise floor is taken as the edge",
          "film_CVN7-30_T.csv": "a spurious rise at the noise floor is taken as the edge"}


@pytest.fixture(scope="module")
def demo_stdout(tmp_path_factory):
    r = run("demo", "--out", str(tmp_path_factory.mktemp("demo") / "out"))
    assert r.returncode == 0, r.stderr
    return r.stdout


@pytest.mark.parametrize("ent", [pytest.param(e, id=e["file"], marks=pytest.mark.xfail(
    strict=True, reason=_KNOWN[e["file"]])) if e["file"] in _KNOWN else
    pytest.param(e, id=e["file"]) for e in _demo_entries()])
def test_demo_file_gives_back_its_truth(ent, demo_stdout):
    # synthetic truths recorded by the script that generated the demo: the same transition,
    # every true gap within 0.05 eV (the scale of the spread between Tauc analyses; the
    # demo's edges carry Urbach tails)
    rows = {line.split()[0]: line for line in demo_stdout.splitlines() if line.split()}
    truth, row = ent["truth"], rows[ent["file"]]
    assert row.split()[1] == truth["transition"], row
    for kind, key in (("dir", "eg_direct_ev"), ("ind", "eg_indirect_ev")):
        if truth.get(key) is not None:
            got = re.search(kind + r" (\d+\.\d+)±", row)
            assert got and abs(float(got.group(1)) - truth[key]) <= 0.05, row