"""Input/output hashing and the build manifest."""

from __future__ import annotations

import hashlib
import json
import os
import shutil
from pathlib import Path

import pytest

from reportgen import manifest as mf
from reportgen.manifest import Manifest, ProjectRecord


def _tree(root: Path, files: dict[str, str]) -> list[Path]:
    out = []
    for rel, text in files.items():
        p = root / rel
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_text(text)
        out.append(p)
    return out


def test_file_sha256_matches_known_digest(tmp_path):
    p = tmp_path / "abc.txt"
    p.write_bytes(b"abc")
    # FIPS 180-2 example "abc" (published test vector)
    assert mf.file_sha256(p) == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"


def test_hash_files_depends_on_names_and_content_only(tmp_path):
    a = _tree(tmp_path / "a", {"project.yaml": "x: 1\n", "loads/l.csv": "1,2\n"})
    h1 = mf.hash_files(a, tmp_path / "a")
    assert h1 == mf.hash_files(list(reversed(a)) + a[:1], tmp_path / "a")  # order and duplicates
    # moved folder, same relative names and bytes -> same hash; mtimes do not count
    shutil.copytree(tmp_path / "a", tmp_path / "b")
    b = [tmp_path / "b" / p.relative_to(tmp_path / "a") for p in a]
    os.utime(b[0], (1, 1))
    assert mf.hash_files(b, tmp_path / "b") == h1
    # content change
    b[1].write_text("1,3\n")
    assert mf.hash_files(b, tmp_path / "b") != h1
    # rename with same content
    b[1].write_text("1,2\n")
    b[1].rename(tmp_path / "b" / "loads" / "m.csv")
    assert mf.hash_files([b[0], tmp_path / "b/loads/m.csv"], tmp_path / "b") != h1
    # moving bytes between names is not a collision (framing)
    c = _tree(tmp_path / "c", {"ab": "c", "a": "bc"})
    d = _tree(tmp_path / "d", {"ab": "", "a": "bcc"})
    assert mf.hash_files(c, tmp_path / "c") != mf.hash_files(d, tmp_path / "d")


def test_hash_files_rejects_outside_and_missing(tmp_path):
    (tmp_path / "r").mkdir()
    (tmp_path / "o.txt").write_text("o")
    with pytest.raises(ValueError, match="not inside"):
        mf.hash_files([tmp_path / "o.txt"], tmp_path / "r")
    with pytest.raises(FileNotFoundError):
        mf.hash_files([tmp_path / "r" / "gone.yaml"], tmp_path / "r")


def test_hash_inputs_extra_and_mapping(tmp_path):
    files = _tree(tmp_path / "p", {"project.yaml": "a", "t/report.html": "<p>"})
    base = mf.hash_inputs(files, {"version": "0.1.0", "options": {"pdf": True, "strict": False}})
    # key order of extra is irrelevant (canonical JSON)
    assert base == mf.hash_inputs(files, {"options": {"strict": False, "pdf": True}, "version": "0.1.0"})
    assert base != mf.hash_inputs(files, {"version": "0.1.1", "options": {"pdf": True, "strict": False}})
    assert base != mf.hash_inputs(files, {"version": "0.1.0", "options": {"pdf": False, "strict": False}})
    assert base != mf.hash_inputs(files[:1], {"version": "0.1.0", "options": {"pdf": True, "strict": False}})
    # default root = deepest common folder -> same as explicit root
    assert mf.hash_inputs(files, {}) == mf.hash_inputs(files, {}, root=tmp_path / "p")
    # mapping form: names are what is hashed
    named = {"project/project.yaml": files[0], "template/report.html": files[1]}
    assert mf.hash_inputs(named, {"v": 1}) == mf.hash_inputs(dict(reversed(named.items())), {"v": 1})
    assert mf.hash_inputs(named, {"v": 1}) != mf.hash_inputs({"x": files[0], "template/report.html": files[1]},
                                                            {"v": 1})
    # Paths in extra are hashed as POSIX text
    assert mf.hash_inputs(named, {"t": Path("a/b")}) == mf.hash_inputs(named, {"t": "a/b"})
    with pytest.raises(ValueError):
        mf.hash_inputs(named, {"x": float("nan")})


def test_canonical_json_is_stable():
    assert mf.canonical_json({"b": 1, "a": [1.5, "ü"]}) == '{"a":[1.5,"ü"],"b":1}'
    assert mf.canonical_json({"s": {3, 1, 2}, "t": (1, 2)}) == '{"s":[1,2,3],"t":[1,2]}'
    with pytest.raises(TypeError):
        mf.canonical_json({1: "non-string key"})
    with pytest.raises(TypeError):
        mf.canonical_json({"o": object()})


def _record(folder: Path) -> ProjectRecord:
    return ProjectRecord(input_hash="ab" * 32, outputs=mf.output_hashes(folder), status="warn",
                         summary={"title": "Plant A", "q_bank_var": 150000.0, "pf_after": 0.97})


def test_manifest_round_trip_and_canonical_bytes(tmp_path):
    out = tmp_path / "site"
    _tree(out / "plant-a", {"index.html": "<h1>A</h1>", "fig/one.svg": "<svg/>"})
    m = Manifest.load(out)
    assert m.projects == {} and m.warnings == []
    m.set("plant-a", _record(out / "plant-a"))
    m.set("0-first", ProjectRecord("cd" * 32, {}, None, {}))
    m.save()
    text = Manifest.path_for(out).read_text()
    data = json.loads(text)
    assert data["format"] == 1
    assert list(data["projects"]) == ["0-first", "plant-a"]  # sorted
    assert data["projects"]["plant-a"]["outputs"] == {
        "fig/one.svg": hashlib.sha256(b"<svg/>").hexdigest(),
        "index.html": hashlib.sha256(b"<h1>A</h1>").hexdigest(),
    }
    assert "time" not in text and "date" not in text
    again = Manifest.load(out)
    assert again.projects == m.projects
    # saving the loaded manifest gives the same bytes (reproducible)
    again.save()
    assert Manifest.path_for(out).read_text() == text
    again.remove("0-first")
    assert again.names() == ["plant-a"]


@pytest.mark.parametrize("content, fragment", [
    (b"{\"format\": 1, \"projects\": {", "corrupt"),
    (b"\xff\xfe\x00garbage", "corrupt"),
    (b"[1, 2]", "format"),
    (b"{\"format\": 99, \"projects\": {}}", "format"),
    (b"{\"format\": 1, \"projects\": []}", "project table"),
    (b"", "corrupt"),
])
def test_corrupt_manifest_warns_and_is_empty(tmp_path, content, fragment):
    out = tmp_path / "site"
    p = Manifest.path_for(out)
    p.parent.mkdir(parents=True)
    p.write_bytes(content)
    said: list[str] = []
    m = Manifest.load(out, on_warning=said.append)
    assert m.projects == {}
    assert len(said) == 1 and fragment in said[0] and said == m.warnings


def test_bad_record_is_dropped_others_kept(tmp_path):
    out = tmp_path / "site"
    p = Manifest.path_for(out)
    p.parent.mkdir(parents=True)
    p.write_text(json.dumps({"format": 1, "projects": {
        "good": {"input_hash": "aa", "outputs": {"index.html": "bb"}, "status": "pass", "summary": {}},
        "bad": {"input_hash": 5},
    }}))
    m = Manifest.load(out)
    assert m.names() == ["good"]
    assert len(m.warnings) == 1 and "'bad'" in m.warnings[0]


def test_unreadable_manifest_warns(tmp_path):
    out = tmp_path / "site"
    Manifest.path_for(out).mkdir(parents=True)  # a folder where the file should be
    m = Manifest.load(out)
    assert m.projects == {} and len(m.warnings) == 1


def test_check_detects_modified_missing_unexpected(tmp_path):
    out = tmp_path / "site"
    _tree(out / "p", {"index.html": "x", "a.svg": "y", "b.json": "{}"})
    m = Manifest(out)
    m.set("p", _record(out / "p"))
    h = m.get("p").input_hash
    assert m.check("p").ok and m.is_current("p", h)
    assert not m.is_current("p", "00" * 32)  # inputs changed
    (out / "p" / "a.svg").write_text("edited")
    (out / "p" / "b.json").unlink()
    (out / "p" / "stray.txt").write_text("?")
    res = m.check("p")
    assert res.modified == ("a.svg",) and res.missing == ("b.json",) and res.unexpected == ("stray.txt",)
    assert not res.ok and not m.is_current("p", h)
    assert res.messages("p") == ["p/b.json: missing", "p/a.svg: modified since it was built",
                                 "p/stray.txt: not produced by the build"]
    # a project never built or whose folder is gone
    assert not m.is_current("q", h)
    shutil.rmtree(out / "p")
    assert set(m.check("p").missing) == {"index.html", "a.svg", "b.json"}


def test_output_hashes_skips_symlinks(tmp_path):
    _tree(tmp_path / "o", {"a.txt": "a"})
    (tmp_path / "o" / "l.txt").symlink_to(tmp_path / "o" / "a.txt")
    assert list(mf.output_hashes(tmp_path / "o")) == ["a.txt"]


def test_folder_files_skips_hidden(tmp_path):
    _tree(tmp_path / "p", {"project.yaml": "a", "data/b.csv": "b", ".hidden": "h", ".git/config": "c",
                           "data/.swp": "s"})
    assert [p.relative_to(tmp_path / "p").as_posix() for p in mf.folder_files(tmp_path / "p")] == [
        "data/b.csv", "project.yaml"]
    assert len(mf.folder_files(tmp_path / "p", skip_hidden=False)) == 5
