"""gitinfo against a temporary repository built here with fixed names and dates."""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import pytest

from reportgen import gitinfo

pytestmark = pytest.mark.skipif(shutil.which("git") is None and not os.environ.get("CI"),
                                reason="git not installed")

# (committer/author date, subject, {path: content or None to delete})
COMMITS = [
    ("2024-01-10T09:00:00+01:00", "Initial loads", {
        "projects/plant-a/project.yaml": "project:\n  name: Plant A\n  revision: A\n",
        "projects/plant-a/loads.csv": "name,p_w\nMixer,59500\n",
        "projects/plant-a/old.txt": "to be removed\n",
        "projects/plant-b/project.yaml": "project:\n  revision: '1'\n",
        ".gitignore": "*.log\n",
    }),
    ("2024-02-05T16:30:00-05:00", "Add compressor", {
        "projects/plant-a/project.yaml": "project:\n  name: Plant A\n  revision: B\n",
        "projects/plant-a/loads.csv": "name,p_w\nMixer,61200\nCompressor,30000\n",
    }),
    ("2024-02-20T12:00:00+00:00", "Work in progress", {
        "projects/plant-a/project.yaml": "project: [unclosed\n  revision: C\n",
    }),
    ("2024-03-01T10:00:00+02:00", "Plant B only", {
        "projects/plant-b/project.yaml": "project:\n  revision: '2'\n",
        "projects/site*/project.yaml": "project:\n  revision: S1\n",
        "projects/site-two/project.yaml": "project:\n  revision: T1\n",
    }),
    ("2024-03-15T08:00:00+00:00", "Issue revision 3", {
        "projects/plant-a/project.yaml": "project:\n  name: Plant A\n  revision: 3\n",
        "projects/plant-a/sub/notes.md": "# Notes\n",
        "projects/plant-a/old.txt": None,
    }),
    ("2024-03-20T08:00:00+00:00", "Second site", {
        "projects/site-two/project.yaml": "project:\n  revision: T2\n",
    }),
]


def _git(repo: Path, *args: str) -> str:
    return subprocess.run(["git", "-C", str(repo), *args], check=True, capture_output=True,
                          text=True).stdout.strip()


@pytest.fixture
def isolated_git(tmp_path, monkeypatch):
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    monkeypatch.setenv("GIT_CONFIG_NOSYSTEM", "1")
    monkeypatch.setenv("GIT_CONFIG_GLOBAL", os.devnull)
    monkeypatch.setenv("GIT_CEILING_DIRECTORIES", str(tmp_path))
    for who in ("AUTHOR", "COMMITTER"):
        monkeypatch.setenv(f"GIT_{who}_NAME", "Avery Example")
        monkeypatch.setenv(f"GIT_{who}_EMAIL", "avery@example.invalid")
    return tmp_path


@pytest.fixture
def repo(isolated_git, monkeypatch):
    r = isolated_git / "repo"
    r.mkdir()
    _git(r, "init", "-q", "-b", "main")
    ids = []
    for date, subject, changes in COMMITS:
        for rel, text in changes.items():
            p = r / rel
            if text is None:
                p.unlink()
            else:
                p.parent.mkdir(parents=True, exist_ok=True)
                p.write_text(text)
        _git(r, "add", "-A")
        env = dict(os.environ, GIT_AUTHOR_DATE=date, GIT_COMMITTER_DATE=date)
        subprocess.run(["git", "-C", str(r), "commit", "-q", "-m", subject], check=True, env=env)
        ids.append(_git(r, "rev-parse", "HEAD"))
    _git(r, "tag", "issued-b", ids[1])
    return r, ids


def test_folder_commit_is_last_commit_touching_folder(repo):
    r, ids = repo
    a = gitinfo.folder_commit(r / "projects" / "plant-a")
    assert a == gitinfo.CommitInfo(ids[4], ids[4][:len(a.short_id)], "2024-03-15T08:00:00Z",
                                   "Issue revision 3", "Avery Example")
    assert len(a.short_id) >= 7
    b = gitinfo.folder_commit(r / "projects" / "plant-b")
    # committer date 10:00 at +02:00 is 08:00 UTC (hand calculation)
    assert (b.id, b.date, b.subject) == (ids[3], "2024-03-01T08:00:00Z", "Plant B only")
    # a file path works as well; the repository top folder gives HEAD
    assert gitinfo.folder_commit(r / "projects" / "plant-a" / "loads.csv").id == ids[1]
    assert gitinfo.folder_commit(r).id == ids[5]
    assert gitinfo.repo_root(r / "projects" / "plant-a") == r.resolve()
    assert b.as_dict()["subject"] == "Plant B only"


def test_history_with_revisions(repo):
    r, ids = repo
    h = gitinfo.history(r / "projects" / "plant-a")
    assert [e.id for e in h] == [ids[4], ids[2], ids[1], ids[0]]  # newest first, plant-b commits left out
    assert [e.revision for e in h] == ["3", None, "B", "A"]  # unparsable WIP version -> None
    assert [e.subject for e in h] == ["Issue revision 3", "Work in progress", "Add compressor", "Initial loads"]
    # UTC conversion of the committer dates (hand calculation): 16:30 at -05:00 = 21:30 Z
    assert [e.date for e in h] == ["2024-03-15T08:00:00Z", "2024-02-20T12:00:00Z",
                                   "2024-02-05T21:30:00Z", "2024-01-10T08:00:00Z"]
    assert [e.id for e in gitinfo.history(r / "projects" / "plant-a", limit=2)] == [ids[4], ids[2]]
    assert gitinfo.history(r / "projects" / "plant-a", filename="missing.yaml")[0].revision is None
    assert gitinfo.find_revision(r / "projects" / "plant-a", "B").id == ids[1]
    assert gitinfo.find_revision(r / "projects" / "plant-a", "Z") is None


def test_glob_characters_in_folder_names_are_literal(repo):
    r, ids = repo
    star = gitinfo.history(r / "projects" / "site*")
    assert [e.revision for e in star] == ["S1"]  # "site*" must not match site-two
    assert [e.revision for e in gitinfo.history(r / "projects" / "site-two")] == ["T2", "T1"]


def test_read_list_and_materialize_earlier_revision(repo, tmp_path):
    r, ids = repo
    a = r / "projects" / "plant-a"
    assert gitinfo.read_at(ids[0], a / "project.yaml") == COMMITS[0][2]["projects/plant-a/project.yaml"].encode()
    assert gitinfo.read_at("issued-b", a / "loads.csv") == b"name,p_w\nMixer,61200\nCompressor,30000\n"
    assert gitinfo.read_at(ids[0], a / "old.txt") == b"to be removed\n"  # gone from disk, still in history
    assert gitinfo.read_at(ids[0], a / "sub" / "notes.md") is None  # did not exist yet
    assert gitinfo.read_at("no-such-rev", a / "loads.csv") is None
    assert gitinfo.read_at("--output=/tmp/x", a / "loads.csv") is None  # never read as an option
    assert gitinfo.list_at(ids[0], a) == ["loads.csv", "old.txt", "project.yaml"]
    assert gitinfo.list_at("HEAD", a) == ["loads.csv", "project.yaml", "sub/notes.md"]
    assert gitinfo.list_at("nope", a) == []
    assert gitinfo.resolve_rev(a, "HEAD~4") == ids[1]
    assert gitinfo.resolve_rev(a, "nope") is None

    dest = tmp_path / "at-b"
    written = gitinfo.materialize("issued-b", a, dest)
    assert written == ["loads.csv", "old.txt", "project.yaml"]
    assert (dest / "project.yaml").read_text() == COMMITS[1][2]["projects/plant-a/project.yaml"]
    assert (dest / "old.txt").read_text() == "to be removed\n"
    assert sorted(str(p.relative_to(dest)) for p in dest.rglob("*") if p.is_file()) == written
    dest2 = tmp_path / "at-head"
    assert gitinfo.materialize("HEAD", a, dest2) == ["loads.csv", "project.yaml", "sub/notes.md"]
    assert (dest2 / "sub" / "notes.md").read_text() == "# Notes\n"
    assert gitinfo.materialize("nope", a, tmp_path / "x") is None
    # the repository top folder itself
    assert "projects/plant-b/project.yaml" in gitinfo.list_at("HEAD", r)


def test_source_info(repo):
    r, ids = repo
    a = r / "projects" / "plant-a"
    info = gitinfo.source_info(a)
    assert info["id"] == ids[4] and info["dirty"] is False and info["date"] == "2024-03-15T08:00:00Z"
    (a / "loads.csv").write_text("changed\n")
    assert gitinfo.source_info(a)["dirty"] is True


def test_dirty_working_copy(repo):
    r, _ = repo
    a = r / "projects" / "plant-a"
    assert gitinfo.folder_dirty(a) is False
    (r / "projects" / "plant-a" / "debug.log").write_text("ignored\n")
    assert gitinfo.folder_dirty(a) is False  # ignored files do not count
    (a / "loads.csv").write_text("name,p_w\nMixer,1\n")
    assert gitinfo.folder_dirty(a) is True  # modified
    assert gitinfo.folder_dirty(r / "projects" / "plant-b") is False  # other folder unaffected
    _git(r, "checkout", "--", "projects/plant-a/loads.csv")
    assert gitinfo.folder_dirty(a) is False
    (a / "sub" / "deep").mkdir()
    (a / "sub" / "deep" / "new.csv").write_text("x\n")
    assert gitinfo.folder_dirty(a) is True  # untracked, nested
    _git(r, "add", "projects/plant-a/sub/deep/new.csv")
    assert gitinfo.folder_dirty(a) is True  # staged
    _git(r, "rm", "-q", "--cached", "projects/plant-a/sub/deep/new.csv")
    (a / "sub" / "deep" / "new.csv").unlink()
    assert gitinfo.folder_dirty(a) is False
    (a / "project.yaml").unlink()
    assert gitinfo.folder_dirty(a) is True  # deleted


def test_outside_a_repository_nothing_breaks(isolated_git):
    loose = isolated_git / "loose"
    loose.mkdir()
    (loose / "project.yaml").write_text("project:\n  revision: A\n")
    assert gitinfo.folder_commit(loose) is None
    assert gitinfo.folder_dirty(loose) is False
    assert gitinfo.history(loose) == []
    assert gitinfo.read_at("HEAD", loose / "project.yaml") is None
    assert gitinfo.list_at("HEAD", loose) == []
    assert gitinfo.materialize("HEAD", loose, isolated_git / "m") is None
    assert gitinfo.repo_root(loose) is None
    assert gitinfo.source_info(loose) is None
    assert gitinfo.folder_commit(isolated_git / "does" / "not" / "exist") is None


def test_empty_repository(isolated_git):
    r = isolated_git / "empty"
    r.mkdir()
    _git(r, "init", "-q")
    (r / "project.yaml").write_text("x: 1\n")
    assert gitinfo.folder_commit(r) is None
    assert gitinfo.history(r) == []
    assert gitinfo.folder_dirty(r) is True  # untracked file


def test_git_missing(repo, monkeypatch):
    r, _ = repo
    monkeypatch.setenv("PATH", str(r / "no-bin-here"))
    assert not gitinfo.git_available()
    assert gitinfo.folder_commit(r / "projects" / "plant-a") is None
    assert gitinfo.history(r / "projects" / "plant-a") == []
    assert gitinfo.folder_dirty(r / "projects" / "plant-a") is False
