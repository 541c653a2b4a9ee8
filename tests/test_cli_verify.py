"""`zsplan verify` and `zsplan render --results` through the command line."""
import json
import subprocess
import sys
from pathlib import Path

DEMO = Path(__file__).resolve().parents[1] / "src" / "zsplan" / "demo"


def zsplan(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "zsplan.cli", *map(str, args)],
                          capture_output=True, text=True, cwd=cwd)


def test_verify_demo_flat_passes_with_one_suspect():
    r = zsplan("verify", DEMO / "flat.yaml", DEMO / "flat.results.csv", "--json")
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stdout)
    status = {(c["board"], c["ref"]): c["status"] for c in doc["circuits"]}
    # invented readings: CU1/2's R1+R2 reads 1.44 x the expected value, outside the
    # 0.7-1.3 band - common practice (no published source)
    assert status[("CU1", "2")] == "suspect"
    assert sum(s == "pass" for s in status.values()) == 6
    assert set(status.values()) <= {"pass", "fail", "suspect", "missing"}


def test_verify_demo_workshop_fails_with_exit_1(tmp_path):
    sheet = tmp_path / "sheet.csv"
    r = zsplan("verify", DEMO / "workshop.yaml", DEMO / "workshop.results.csv", "-o", sheet)
    assert r.returncode == 1, r.stderr
    assert "fail" in r.stdout and "Caution" in r.stdout
    assert sheet.exists() and "DB1" in sheet.read_text(encoding="utf-8-sig")


def test_verify_unknown_circuit_is_a_clean_error(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("board,ref,r1r2,zs\nCU1,99,0.5,0.9\n")
    r = zsplan("verify", DEMO / "flat.yaml", bad)
    assert r.returncode == 2
    assert "Traceback" not in r.stderr and "bad.csv" in r.stderr and "2" in r.stderr


def test_render_with_measured_results(tmp_path):
    out = tmp_path / "measured.svg"
    r = zsplan("render", DEMO / "flat.yaml", "--results", DEMO / "flat.results.csv", "-o", out)
    assert r.returncode == 0, r.stderr
    assert "measured" in out.read_text(encoding="utf-8").lower()
