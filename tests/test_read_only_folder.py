"""A trial folder the user may not write to, enforced by the operating system (issue 14).

The recorded trial is copied, its files and folders made read-only, and every command is
run in a fresh interpreter without write permission: as root the test drops, with
util-linux ``setpriv``, the capabilities that let root ignore file modes; as an ordinary
user the modes alone bind.  Reading commands work; writing commands refuse,
say how to go on, and nothing in the folder changes.  The readings are invented.
"""

from __future__ import annotations

import hashlib
import os
import shutil
import stat
import subprocess
import sys
import tempfile
from pathlib import Path

import pytest
from malformed_sheets.make_corpus import fill_csv, good_readings, make_test_plan

from trialkit.records.sheets import export_csv, ingest_sheet

#: Capabilities that let root ignore file modes (capabilities(7)).
DROPPED = "-dac_override,-dac_read_search,-fowner"


@pytest.fixture(scope="module")
def read_only_trial():
    # outside pytest's per-user temporary folder, which only its owner may enter
    base = Path(tempfile.mkdtemp(prefix="trialkit-ro-"))
    os.chmod(base, 0o755)
    plan = make_test_plan(base / "made")
    sheet = fill_csv(export_csv(plan, base / "blank.csv"), base / "filled.csv",
                     good_readings())
    assert ingest_sheet(sheet, plan).ok
    folder = base / "locked" / "trial"
    shutil.copytree(plan.trial.folder, folder)
    writable = base / "scratch"
    writable.mkdir()
    os.chmod(writable, 0o777)
    for path in [folder, *folder.rglob("*")]:
        mode = stat.S_IMODE(path.stat().st_mode) & ~0o222
        os.chmod(path, mode | (0o555 if path.is_dir() else 0o444))
    os.chmod(base / "locked", 0o755)  # others may pass through
    # a correction to record: one coupon's final mass changed by 0.01 g
    lines = Path(sheet).read_text(encoding="utf-8-sig").splitlines()
    keys = next(i for i, ln in enumerate(lines) if "mass_final_g" in ln.split(","))
    col = lines[keys].split(",").index("mass_final_g")
    row = next(i for i in range(keys + 1, len(lines)) if lines[i].split(",")[col])
    cells = lines[row].split(",")
    cells[col] = f"{float(cells[col]) + 0.01:.4f}"
    lines[row] = ",".join(cells)
    (writable / "corrected.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    os.chmod(writable / "corrected.csv", 0o644)
    yield folder, writable
    for path in [base, *base.rglob("*")]:
        os.chmod(path, 0o777 if path.is_dir() else 0o666)
    shutil.rmtree(base)


def _run(args, scratch: Path):
    env = {**os.environ, "HOME": str(scratch), "MPLCONFIGDIR": str(scratch),
           "TMPDIR": str(scratch)}
    cmd = [sys.executable, "-m", "trialkit", *args]
    if os.geteuid() == 0:
        # root stays root but loses the capabilities that override file modes, so the
        # modes bind it as they bind its files' owner (and the environment stays readable)
        setpriv = shutil.which("setpriv")
        assert setpriv, "running as root needs util-linux setpriv to drop capabilities"
        cmd = [setpriv, f"--bounding-set={DROPPED}", *cmd]
    return subprocess.run(cmd, capture_output=True, text=True, env=env, cwd=scratch,
                          timeout=600)


def _snapshot(folder: Path) -> dict:
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def test_reading_commands_work_and_writing_ones_refuse(read_only_trial):
    folder, scratch = read_only_trial
    before = _snapshot(folder)
    probe = _run(["history", str(folder)], scratch)
    assert probe.returncode == 0, probe.stderr
    # the permission really binds: the same user cannot create a file there
    touch = _run(["new", str(folder / "sub")], scratch)
    assert touch.returncode != 0
    for args in (["responses", str(folder)], ["analyze", str(folder)],
                 ["verify", str(folder)],
                 ["report", str(folder), "--out", str(scratch / "r.html")]):
        done = _run(args, scratch)
        assert done.returncode in (0, 1), (args, done.stderr)   # 1: readings still missing
        assert "Traceback" not in done.stderr and "readonly" not in done.stderr
    assert (scratch / "r.html").stat().st_size > 1000
    for args, hint in ((["report", str(folder)], "give --out"),
                       (["plan", str(folder)], "give --out"),
                       (["ingest", str(scratch / "corrected.csv"), "--trial", str(folder)],
                        "is the trial folder writable")):
        refused = _run(args, scratch)
        assert refused.returncode != 0, args
        said = refused.stderr + refused.stdout
        assert "Traceback" not in said, (args, said)
        assert hint in said and "othing" in said, (args, said)   # "[Nn]othing ... stored"
    assert _snapshot(folder) == before


def test_a_log_from_before_the_chain_is_read_where_it_may_not_be_migrated():
    # its chain is added the first time it is opened where it may be written; in a
    # read-only folder it is read as it is, and verify says it has no chain yet
    from test_chain import PRE_CHAIN_SCHEMA

    base = Path(tempfile.mkdtemp(prefix="trialkit-ro-old-"))
    os.chmod(base, 0o755)
    try:
        folder = make_test_plan(base / "trial").trial.folder
        import sqlite3

        con = sqlite3.connect(folder / "record-log.sqlite")
        con.executescript(PRE_CHAIN_SCHEMA)
        con.commit()
        con.close()
        scratch = base / "scratch"
        scratch.mkdir()
        os.chmod(scratch, 0o777)
        for path in [folder, *folder.rglob("*")]:
            os.chmod(path, 0o555 if path.is_dir() else 0o444)
        before = _snapshot(folder)
        shown = _run(["history", str(folder), "--json"], scratch)
        assert shown.returncode == 0, shown.stderr
        assert '"MT"' in shown.stdout and "25.5" in shown.stdout
        checked = _run(["verify", str(folder)], scratch)
        assert checked.returncode == 1 and "no hash chain" in checked.stdout, checked
        assert _snapshot(folder) == before
        assert not (folder / "record-log.sqlite.head").exists()
    finally:
        for path in [base, *base.rglob("*")]:
            os.chmod(path, 0o777 if path.is_dir() else 0o666)
        shutil.rmtree(base)
