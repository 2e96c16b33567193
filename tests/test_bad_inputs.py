"""The bad-input corpus (tests/bad_inputs/cases.toml) through the command line.

Every case must end with exit status 2 and one line on stderr that names the file (or the
option) and holds the expected fragment: no traceback, nothing accepted, no file written.
Run as a script for the totals::

    .venv/bin/python tests/test_bad_inputs.py
"""

from __future__ import annotations

import contextlib
import gzip
import io
import os
import shutil
import sys
import tempfile
import threading
import tomllib
import traceback
from collections import Counter
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "routes_demo"
CORPUS = Path(__file__).resolve().parent / "bad_inputs"
CASES: list[dict[str, Any]] = tomllib.loads((CORPUS / "cases.toml").read_text())["case"]

VEHICLE = str(DEMO / "vehicles" / "swift_tern.toml")
GPX = str(DEMO / "harbour_loop.gpx")
_SIM_OUT = ["--trace", "{out}/trace.csv", "--plot", "{out}/profile.png"]
_PLAN_OUT = ["--plan-json", "{out}/plan.json", "--stops-csv", "{out}/stops.csv"]
COMMANDS = {
    "vehicle": ["simulate", GPX, "--vehicle", "{file}", "--speed-kph", "50", *_SIM_OUT],
    "route": ["simulate", "{file}", "--vehicle", VEHICLE, "--speed-kph", "50", *_SIM_OUT],
    "osm": ["simulate", "{file}", "--vehicle", VEHICLE, "--waypoints", "41.2,-31.6;41.202,-31.6",
            "--no-cache", *_SIM_OUT],
    "dem": ["simulate", GPX, "--vehicle", VEHICLE, "--speed-kph", "50", "--dem", "{file}",
            *_SIM_OUT],
    "weather": ["simulate", GPX, "--vehicle", VEHICLE, "--speed-kph", "50", "--weather", "{file}",
                *_SIM_OUT],
    "chargers": ["plan", GPX, "--vehicle", VEHICLE, "--speed-kph", "50", "--chargers", "{file}",
                 *_PLAN_OUT],
    "lodgings": ["plan", GPX, "--vehicle", VEHICLE, "--speed-kph", "50", "--chargers",
                 str(DEMO / "tamsreach.osm"), "--lodging", "{file}", *_PLAN_OUT],
    "scenario": ["run", "{file}"],
    "coastdown": ["coastdown", "{file}", "--vehicle", VEHICLE, "--snippet", "{out}/body.toml"],
    "log": ["simulate", "{file}", "--from-log", "--vehicle", VEHICLE, *_SIM_OUT],
}
PREFIX_READER = {"vehicle": "vehicle", "route": "route", "map": "osm", "dem": "dem",
                 "chargers": "chargers", "lodgings": "lodgings",
                 "scenario": "scenario", "coastdown": "coastdown", "log": "log"}
#: Demo files for the command-line cases (``args``).
DEMO_FILES = {"gpx": GPX, "vehicle": VEHICLE, "osm": str(DEMO / "tamsreach.osm"),
              "dem": str(DEMO / "tamsreach_dem.tif"), "epw": str(DEMO / "tamsreach.epw"),
              "lodging": str(DEMO / "lodgings.csv"), "long": "x" * 260}


def case_id(case: dict[str, Any]) -> str:
    if "args" in case:
        flag = case.get("names", "")
        value = next((a for a in case["args"][case["args"].index(flag) + 1:]
                      if flag in case["args"]), "")
        return f"args-{case['args'][0]}{flag}={value[-20:]}"
    return case.get("file") or f"{case['reader']}-{case.get('make') or case.get('derive')}-" \
        f"{case.get('name', 'dev-zero')}"


def _weather_base(kind: str) -> Path:
    if kind == "epw":
        return DEMO / "tamsreach.epw"
    import pvlib

    data = Path(pvlib.__file__).parent / "data"
    return data / ("723170TYA.CSV" if kind == "tmy3" else "12839.tm2")


def _derive(case: dict[str, Any], target: Path) -> None:
    lines = _weather_base(case["derive"]).read_text().splitlines()
    if "keep_lines" in case:
        lines = lines[:case["keep_lines"]]
    for line, field, value in case.get("fields", []):
        if field < 0:
            lines[line] = value
        else:
            parts = lines[line].split(",")
            parts[field] = value
            lines[line] = ",".join(parts)
    for line, old, new in case.get("replace", []):
        assert old in lines[line], (old, lines[line])
        lines[line] = lines[line].replace(old, new)
    if "overwrite" in case:
        line, col, text = case["overwrite"]
        lines[line] = lines[line][:col] + text + lines[line][col + len(text):]
    target.write_bytes(("\n".join(lines) + "\n").encode(case.get("encoding", "utf-8")))


def _make(case: dict[str, Any], tmp: Path) -> Path:
    """Create the special input of a ``make`` case; return the path to give."""
    kind, target = case["make"], tmp / case.get("name", "input")
    depth = case.get("depth", 0)
    if kind == "devzero":
        return Path("/dev/zero")
    if kind == "fifo":
        os.mkfifo(target)
    elif kind == "folder":
        target.mkdir()
    elif kind == "missing":
        pass
    elif kind == "copy":
        shutil.copyfile(ROOT / case["source"], target)
    elif kind == "padded":
        base = Path(VEHICLE).read_text() if case["reader"] == "vehicle" else \
            '[[trip]]\nname = "t"\nroute = "a.gpx"\nvehicles = ["v"]\n'
        pad = int(case["size_mb"] * 2**20) - len(base)
        target.write_text(base + ("# padding" + "." * 70 + "\n") * (pad // 80 + 1))
    elif kind == "gzip_bomb":
        body = b" " * int(case["size_mb"] * 2**20)
        target.write_bytes(gzip.compress(b"<?xml version='1.0'?>\n<osm version='0.6'>" + body
                                         + b"</osm>\n", mtime=0))
    elif kind == "deep_json":
        target.write_text('{"type": "LineString", "coordinates": ' + "[" * depth + "]" * depth
                          + "}")
    elif kind == "deep_toml":
        target.write_text("x = " + "[" * depth + "]" * depth + "\n")
    elif kind == "deep_xml":
        target.write_text('<gpx version="1.1">' + "<a>" * depth + "</a>" * depth + "</gpx>\n")
    elif kind == "big_field":
        target.write_text("lat,lon,name,connector\n41.2,-31.6,\"" + "n" * 200_000
                          + "\",type2\n")
    else:  # pragma: no cover
        raise ValueError(f"unknown make {kind!r}")
    return target


def materialise(case: dict[str, Any], tmp: Path) -> tuple[str, Path]:
    """The reader and the input path of a case (files copied or made in ``tmp``)."""
    if "file" in case:
        reader = PREFIX_READER[case["file"].split("_")[0]]
        target = tmp / case["file"]
        shutil.copyfile(CORPUS / "files" / case["file"], target)
        return reader, target
    if "derive" in case:
        target = tmp / case["name"]
        _derive(case, target)
        return case["reader"], target
    return case["reader"], _make(case, tmp)


@contextlib.contextmanager
def _environment(env: dict[str, str]) -> Iterator[None]:
    saved = {k: os.environ.get(k) for k in env}
    os.environ.update(env)
    try:
        yield
    finally:
        for k, v in saved.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v


@contextlib.contextmanager
def _fifo_watchdog(path: Path) -> Iterator[None]:
    """If a reader ever blocks on the FIFO, keep opening its other end so the test ends."""
    stop = threading.Event()

    def unblock() -> None:
        while not stop.wait(5.0):
            with contextlib.suppress(OSError):
                os.close(os.open(path, os.O_WRONLY | os.O_NONBLOCK))

    thread = threading.Thread(target=unblock, daemon=True)
    thread.start()
    try:
        yield
    finally:
        stop.set()
        thread.join()


def _setup(out: Path, names: list[str]) -> None:
    """Make what a command-line case needs in its output folder."""
    for name in names:
        if name == "afile":
            (out / name).write_text("a file where a folder is expected\n")
        elif name == "ro":
            (out / name).mkdir()
            (out / name).chmod(0o555)
        else:
            (out / name).mkdir()


def run_case(case: dict[str, Any], tmp: Path) -> tuple[str, str]:
    """Run one case; returns (outcome, detail), outcome one of "clean", "accepted",
    "traceback", "wrong" (exit 2 but the message or the files are not as required)."""
    from tripsim.cli import main

    work = tmp / "work"
    work.mkdir()
    out = tmp / "out"
    out.mkdir()
    if "args" in case:
        _setup(out, case.get("setup", []))
        reader, path = "args", out
    else:
        reader, path = materialise(case, work)
    before = sorted(p.name for p in work.iterdir())
    made = sorted(p.name for p in out.iterdir())
    err, std = io.StringIO(), io.StringIO()
    guard = _fifo_watchdog(path) if case.get("make") == "fifo" else contextlib.nullcontext()
    with _environment(case.get("env", {})), guard:
        try:
            template = case["args"] if reader == "args" else COMMANDS[reader]
            args = [a.format(file=path, out=out, **DEMO_FILES) for a in template]
            with contextlib.redirect_stderr(err), contextlib.redirect_stdout(std):
                code = main(args)
        except SystemExit as exc:
            code = exc.code
        except BaseException:
            return "traceback", traceback.format_exc(limit=-3)
    lines = [ln for ln in err.getvalue().splitlines() if ln.strip()]
    if code == 0:
        return "accepted", std.getvalue()[-300:]
    named = case.get("names", str(path))
    problems = []
    if code != 2:
        problems.append(f"exit {code}")
    if len(lines) != 1 or not lines[0].startswith("tripsim: error: "):
        problems.append(f"stderr is not one error line: {lines!r}")
    elif case["expect"] not in lines[0] or named not in lines[0]:
        problems.append(f"message {lines[0]!r} lacks {case['expect']!r} or {named!r}")
    if "Traceback" in err.getvalue():
        problems.append("a traceback on stderr")
    if std.getvalue():
        problems.append(f"stdout: {std.getvalue()[:200]!r}")
    written = ([p for p in out.iterdir() if p.name not in made]
               + [p for p in work.iterdir() if p.name not in before])
    if written:
        problems.append(f"files written: {[p.name for p in written]}")
    return ("wrong", "; ".join(problems)) if problems else ("clean", lines[0])


@pytest.mark.parametrize("case", CASES, ids=[case_id(c) for c in CASES])
def test_bad_input_is_one_clean_line(case, tmp_path):
    if case.get("unprivileged") and os.geteuid() == 0:
        pytest.skip("a read-only folder does not stop root")
    outcome, detail = run_case(case, tmp_path)
    assert outcome == "clean", detail


def test_corpus_covers_every_reader_and_item():
    readers = {PREFIX_READER[c["file"].split("_")[0]] if "file" in c else c["reader"]
               for c in CASES if "args" not in c}
    assert readers == {"vehicle", "route", "osm", "dem", "weather", "chargers", "lodgings",
                       "scenario", "coastdown", "log"}
    assert {c["item"] for c in CASES} == {1, 2, 3, 4, 5, 6, 7, 8, 9, 10, "xml"}
    files = {p.name for p in (CORPUS / "files").iterdir()}
    assert files == {c["file"] for c in CASES if "file" in c}  # no orphans, none missing
    assert sum(p.stat().st_size for p in (CORPUS / "files").iterdir()) < 100_000


def main() -> int:
    """Run the corpus and print the totals (and every case that is not clean)."""
    import warnings

    warnings.simplefilter("ignore")
    totals: Counter[str] = Counter()
    by_item: dict[str, Counter[str]] = {}
    for case in CASES:
        if case.get("unprivileged") and os.geteuid() == 0:
            totals["skipped (root)"] += 1
            continue
        with tempfile.TemporaryDirectory() as tmp:
            outcome, detail = run_case(case, Path(tmp))
        totals[outcome] += 1
        by_item.setdefault(str(case["item"]), Counter())[outcome] += 1
        if outcome != "clean":
            print(f"{outcome}: {case_id(case)}: {detail}")
    print(f"cases {len(CASES)}: clean errors {totals['clean']}, tracebacks "
          f"{totals['traceback']}, accepted nonsense {totals['accepted']}, other "
          f"{totals['wrong']}")
    for item, counts in sorted(by_item.items()):
        print(f"  item {item}: {sum(counts.values())} cases, {counts['clean']} clean")
    return 0 if totals["clean"] == len(CASES) else 1


if __name__ == "__main__":
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    sys.exit(main())
