"""The fault suite: bad inputs across every command (see tests/faults/fault_cases.py).

Each case must end with exit status 2 (or its stated status), exactly one line on stderr starting
with 'benchnf: error:', no traceback, and every file of the bench exactly as it was (nothing
changed, added or removed). The bench is seeded synthetic data (INVENTED DATA).
"""

import hashlib
import shutil
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent / "faults"))
from fault_bench import make_base  # noqa: E402
from fault_cases import MAY_WRITE, all_cases  # noqa: E402

from benchnf.cli import main  # noqa: E402

CASES = all_cases()


def _errors(stderr: str) -> list[str]:
    """The stderr lines other than warnings (a warning about the figures may come before the refusal)."""
    return [ln for ln in stderr.strip().splitlines() if not ln.startswith("benchnf: warning:")]


@pytest.fixture(scope="module")
def base(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fault-base")
    make_base(folder)
    return folder


def _state(folder: Path) -> dict[str, str]:
    out = {}
    for p in sorted(folder.rglob("*")):
        key = str(p.relative_to(folder))
        if p.is_symlink():
            out[key] = "link:" + str(p.readlink())
        elif p.is_file():
            out[key] = hashlib.sha256(p.read_bytes()).hexdigest()
        else:
            out[key] = "folder"
    return out


@pytest.mark.parametrize(("name", "spoil", "argv", "status"), CASES, ids=[c[0] for c in CASES])
def test_bad_input_is_refused_in_one_line_and_nothing_is_lost(base, tmp_path, capsys, name, spoil, argv, status):
    d = tmp_path / "bench"
    shutil.copytree(base, d, symlinks=True)
    spoil(d)
    before = _state(d)
    rc = main([a.replace("{d}", str(d)) for a in argv])
    err = _errors(capsys.readouterr().err)
    assert "Traceback" not in "\n".join(err)
    assert rc == status, f"exit {rc}: {err}"
    assert len(err) == 1, err
    assert err[0].startswith("benchnf: error:"), err
    after = _state(d)
    if name in MAY_WRITE:  # files the case may add or change (named in fault_cases.MAY_WRITE, with the reason)
        before = {k: v for k, v in before.items() if not k.startswith(MAY_WRITE[name])}
        after = {k: v for k, v in after.items() if not k.startswith(MAY_WRITE[name])}
    assert after == before, "a file was changed, added or removed"


def test_the_suite_has_at_least_150_cases():
    assert len(CASES) >= 150


def test_sigmf_base_name_with_a_dot_reads_its_own_files(tmp_path):
    # 'hot.2.sigmf-meta' used to be read as 'hot.sigmf-*' (demo captures, INVENTED DATA).
    from benchnf.io.sigmf_iq import open_sigmf
    demo = Path(__file__).resolve().parent.parent / "benchnf" / "captures_demo"
    for ext in (".sigmf-meta", ".sigmf-data"):
        shutil.copy(demo / f"vhf_hot{ext}", tmp_path / f"hot.2{ext}")
        shutil.copy(demo / f"vhf_cold{ext}", tmp_path / f"hot{ext}")
    for given in ("hot.2", "hot.2.sigmf-meta", "hot.2.sigmf-data"):
        assert open_sigmf(tmp_path / given).n_frames == open_sigmf(demo / "vhf_hot.sigmf-meta").n_frames
        assert open_sigmf(tmp_path / given).label == open_sigmf(demo / "vhf_hot.sigmf-meta").label.replace(
            "vhf_hot", "hot.2")


@pytest.fixture()
def small_disk(mount_tmpfs):
    """A 96 KiB tmpfs (root only): the disk fills while plots are written."""
    return mount_tmpfs("small", "96k")


def test_a_full_disk_gives_one_line_and_leaves_nothing_behind(base, small_disk, tmp_path, capsys):
    d = tmp_path / "bench"
    shutil.copytree(base, d, symlinks=True)
    rc = main(["analyze", "--terminated", str(d / "terminated.wav"), "--floor", str(d / "floor.wav"), "--tone",
               str(d / "tone.wav"), "--calibration", str(d / "cal.json"), "--quiet",
               "--json", str(small_disk / "r.json"), "--plot", str(small_disk / "plots")])
    err = _errors(capsys.readouterr().err)
    assert rc == 2, err
    assert len(err) == 1 and "the disk is full" in err[0], err
    left = [p.name for p in small_disk.rglob("*") if p.is_file()]
    assert not [n for n in left if n.endswith(".part")], left  # no half-written file
    for p in small_disk.rglob("*.png"):
        assert p.stat().st_size > 1000  # what is there is whole


@pytest.mark.parametrize("trouble", ["read-only", "full"])
def test_recover_into_a_folder_it_cannot_write_is_one_line(base, mount_tmpfs, tmp_path, capsys, trouble):
    """'recover' into a read-only or a full folder: one line, exit 2, the damaged file untouched, nothing left."""
    import subprocess
    folder = mount_tmpfs(trouble, "64k")
    if trouble == "read-only":
        subprocess.run(["mount", "-o", "remount,ro", str(folder)], check=True)
    damaged = tmp_path / "damaged.wav"
    shutil.copy(base / "terminated.wav", damaged)
    before = damaged.read_bytes()
    rc = main(["recover", str(damaged), "-o", str(folder / "rescued.wav")])
    err = _errors(capsys.readouterr().err)
    assert rc == 2 and len(err) == 1 and err[0].startswith("benchnf: error:"), (rc, err)
    assert damaged.read_bytes() == before
    assert not [p.name for p in folder.rglob("*") if p.is_file()]
