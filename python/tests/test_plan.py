"""A bench plan with a limit table run from Python: the same lot files as `spurline batch`, and rows
that pandas.DataFrame accepts (the fixture lot of fixtures/batch/)."""

import csv
import os
import shutil
import subprocess

import pytest

import spurline
from conftest import ROOT


@pytest.fixture(scope="module")
def fixture_lot(tmp_path_factory, spurline_bin):
    d = tmp_path_factory.mktemp("lot")
    for f in ("plan.toml", "limits.csv"):
        shutil.copy(ROOT / "fixtures/batch" / f, d / f)
    env = dict(os.environ, SPURLINE=spurline_bin)
    subprocess.run(["sh", str(ROOT / "fixtures/batch/make_records.sh"), str(d)], env=env, check=True)
    return d


# Source: the command line (`spurline batch`): the lot's summary, yield and failures files are the
# same byte for byte (deterministic output, crate docs), and the rows are the summary's cells.
def test_run_plan_equals_batch(fixture_lot, spurline_bin):
    d = fixture_lot
    p = subprocess.run(
        [spurline_bin, "batch", str(d / "plan.toml"), "--limits", str(d / "limits.csv"),
         "--out", str(d / "cli"), "--jobs", "2"],
        capture_output=True, text=True,
    )
    assert p.returncode in (0, 1), p.stderr  # 1: some limit failed (the fixture lot has failures)
    rows = spurline.run_plan(d / "plan.toml", d / "limits.csv", out=d / "py", jobs=2)
    for name in ("summary.csv", "yield.csv", "failures.csv"):
        assert (d / "py" / name).read_bytes() == (d / "cli" / name).read_bytes(), name
    with open(d / "cli" / "summary.csv", newline="") as f:
        cells = list(csv.DictReader(f))
    assert len(rows) == len(cells) == 8  # 4 devices x 2 conditions
    for row, cell in zip(rows, cells):
        assert list(row) == list(cell)
        for k, v in cell.items():
            got = row[k]
            if v == "":
                assert got is None, k
            elif isinstance(got, bool):
                assert str(got).lower() == v, k
            elif isinstance(got, (int, float)):
                assert got == float(v), k
            else:
                assert got == v, k
    # make_records.sh: d02 fails SFDR (3rd harmonic at -62 dBc against a 65 dBc limit), d01 passes.
    verdicts = {(r["device"], r["condition"]): r["verdict"] for r in rows}
    assert verdicts[("d01", "fin_10M")] == "pass"
    assert verdicts[("d02", "fin_10M")] == "fail"
    assert isinstance(rows[0]["spectrum.snr_db"], float)


def test_run_plan_bad_limits_raise(fixture_lot, tmp_path):
    bad = tmp_path / "limits.csv"
    bad.write_text("condition,metric,low,high,unit,guardband\n*,spectrum.nonsense_db,1,,dB,\n")
    with pytest.raises(spurline.SpurlineError) as e:
        spurline.run_plan(fixture_lot / "plan.toml", bad, out=tmp_path / "out")
    assert e.value.kind == "bad_limits" and e.value.path.endswith("limits.csv")
