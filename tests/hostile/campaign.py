#!/usr/bin/env python3
"""Hostile-input campaign against the `stoik` binary (issue 12, section 7).

Usage:
    python3 tests/hostile/campaign.py [BINARY] [--seed N] [--max-cases N] [--only CLASS]
                                      [--family NAME] [--json FILE] [--workers N]
                                      [--timeout S] [--list-classes] [--list-families]

BINARY defaults to target/release/stoik (relative to the repository root). Python 3.11
standard library only. The cases are generated from the bundled files (mechanisms/*.toml,
mechanisms/thermo/, mechanisms/data/, and the NIST-JANAF tables of
crates/thermo/tests/data/janaf/) with a seeded random generator (`--seed`, default 12), so a
run is reproducible and a case id names the same command line on every machine.

Every case runs in a fresh temporary folder (the files it needs are written there; the
command's working folder is that folder), with a wall-clock timeout (10 s, `--timeout`; 60 s for the huge
grids; 5 s for special input paths), an address-space limit (RLIMIT_AS, 2 GiB) and a file-size limit (RLIMIT_FSIZE,
1 GiB), set in the child before exec. Standard input is /dev/null unless the case feeds a pipe.

Case families (`--list-families`)
---------------------------------
truncate   Every bundled file cut at seeded offsets (0 bytes, mid-line, mid-token, last byte
           dropped), then given to each subcommand that reads that kind of file: a mechanism to
           `check`, `diff` (the file against itself), `energetics` and `run` of a scenario
           naming it; a scenario to `check`, `run` and `batch`; a suite to `suite record`; the
           thermo file through the hydrogen-oxygen mechanism; the rate-data CSV to `fit-rate`;
           a JANAF table to `fit-thermo`; the hydrogen-oxygen scenario, mechanism and thermo
           file also to `rates` and `flux`. `diff` may exit 1 (kinetic changes) and `suite` 4
           (an observable moved); a CSV's `nan` cells are not findings when they lie in its
           mole-fraction columns and stoik warned that those are undefined (the documented
           marker for a total concentration that is not positive).
byteflip   Every bundled file with one to three seeded bytes replaced (random byte, 0xFF,
           NUL, a quote, a bracket, a newline), same commands.
utf8       Invalid UTF-8 (lone continuation byte, truncated sequence, overlong form, 0xFF)
           inserted in a comment, inside a string, in a key and in a number of each bundled
           file: the message must give the line and column of the bad byte.
numbers    Extreme and non-finite numbers (1e308, -1e308, 1.8e308, 5e-324, 1e-320, nan, inf,
           -inf, -0, 0, -1, 1e999, 1e-999, a 400-digit integer, 1e+99999) substituted into seeded
           numeric fields of every bundled file (TOML numbers, numbers inside quantity strings
           such as "600 K", CSV and table cells).
flags      The same extreme values given to every numeric flag (run --temperature-k,
           --end-time-s, --rtol, --atol-mol-per-m3; batch --temperatures-k; fit-thermo
           --common-temperature-k, --low-k, --high-k; fit-rate --confidence,
           --reference-temperature-k; energetics --temperature-k).
extreme    Hand-written physical extremes named in the issue: all initial concentrations zero,
           T = 1e308 K, P = 5e-324 Pa, infinite or negative emissions, negative cos_power,
           zenith photolysis without a sun, rate constants infinite at every temperature,
           noiseless rate data, tiny uncertainties, confidence 0.9999999999999999.
special    Special files in every input position (the command-line file of each subcommand,
           a scenario's `mechanism`, a mechanism's `thermo_files`): a FIFO with no writer,
           /dev/zero, /dev/urandom, /dev/null, a folder, a missing file, a symlink loop, a
           dangling symlink, /dev/stdin fed by a pipe; and special output paths (a folder,
           a missing folder, --output-dir naming a file).
alias      Output paths equal to an input, spelled as given, with ./, through sub/.., as an
           absolute path and through a symlink: run -o the scenario, the mechanism, the thermo
           file (with a run that succeeds and one that fails with exit 3), run --report onto
           the scenario, the mechanism and the thermo file; rates --csv/--report and flux
           --dot/--svg/--report and sensitivity --svg/--report onto them; fit-thermo TABLE -o
           TABLE; fit-rate d.csv --svg d.csv / --snippet d.csv; a mechanism file named like
           the CSV that run or batch will write; fit-rate --snippet s.toml --svg no/dir/p.svg.
collide    Outputs whose names collide: batch a/x.scenario.toml b/x.scenario.toml, the same
           scenario twice, --temperatures-k 600,600.0,6e2; fit-thermo with two tables of one
           stem or two --rename to one name; fit-rate --svg and --snippet to one path.
names      Hostile names in writers whose output must load back: fit-thermo --rename with
           quotes, backslashes, newlines, tabs, brackets, '#', unicode, an empty name; tables
           named A"B.tsv, a\\b.tsv, with a newline or a space; fit-rate --equation with
           quotes, backslashes, newlines; species names with commas and quotes in a mechanism
           (the CSV header must parse).
huge       A 10,000,000-point output grid on the 500-species BRUSS and BECKDO mechanisms and on
           grids of 0, 1, -1, 1e9, 10,000,001 and 2^64 points on the ozone demo; TOML nested 100,000 deep;
           a 30 MB comment.
equivalent Rewritings that must not change the verdict, each run next to the original in its
           own folder: CRLF line endings for every bundled file, the file read from /dev/stdin
           through a pipe (check, run, energetics, fit-rate, fit-thermo), a mechanism whose
           description has a line starting `stoik_scenario`, a scenario with quoted keys, a
           path with spaces and non-ASCII letters, `batch --temperatures-k T` against
           `run --temperature-k T`.

Assertions (finding classes, `--list-classes`)
----------------------------------------------
panic             Exit status 101 or "panicked at" on stderr.
signal            Death by a signal other than our timeout kill and the resource limits.
timeout           Still running at the timeout (killed with its process group).
memory            Killed by the address-space limit: "memory allocation of N bytes failed",
                  "out of memory" or "capacity overflow" on stderr, or SIGABRT/SIGSEGV/SIGKILL
                  with a peak resident size above half the limit.
file-size         Killed by the file-size limit (SIGXFSZ): an output grew beyond 1 GiB.
bad-exit          An exit status outside the documented 0, 1 (only with check --strict), 2, 3.
unlocated         Exit status 2 without a located message. The rule: stderr must hold at least
                  one locator acceptable for the case's fault:
                    content fault (a file's text is bad): a line with NAME:LINE:COLUMN, or with
                      NAME and later "line L" and "column C", where NAME is the path or base
                      name of one of the files the command read (the case's input files);
                    file fault (special, missing or unreadable file): the path as written;
                    flag fault (a command-line value): the flag's name (--temperature-k) or,
                      for a positional argument, the argument as given;
                    output fault (an output path refused): the flag's name or the path.
                  Cases whose fault can be of several kinds accept any of their locators.
check-misses      `run` or `batch` refused a scenario (exit 2) because of its files' content,
                  but `stoik check` on the same scenario, in the same folder, exits 0.
input-modified    A file that existed before the command and is not one of its declared
                  outputs (or is both an input and an output) changed or disappeared.
output-destroyed  A pre-existing output (created with sentinel content) no longer holds the
                  sentinel after a command that exited non-zero.
partial-write     A command other than batch exited 2 and left a new or changed file, or any
                  command left a temporary file (*.tmp) behind.
nonfinite-output  A NaN or infinity (nan, NaN, inf, -inf, infinity, as a whole token) in a file
                  the command wrote (CSV, TOML, SVG; the first 64 MiB are scanned) or on its
                  standard output when it exited 0, 1 or 3.
unloadable-output A file the command wrote does not load back: a TOML file that Python's
                  tomllib rejects, a species or step whose name differs from the one requested
                  (--rename, table stem, --equation), a thermo file or snippet that `stoik check`
                  rejects inside a small mechanism naming it, a CSV whose rows do not all have
                  the header's number of fields or whose cells are not numbers, an SVG that is
                  not well-formed XML.
output-collision  The command exited 0 but wrote fewer distinct outputs than it reported runs
                  (batch), or the written thermo file has fewer distinct species than tables.
alias-accepted    An output path that resolves to one of the command's inputs (same file after
                  resolving ./, .., absolute spelling and symlinks) was not refused: the exit
                  status is not 2. (Whether the input survived is input-modified's business.)
inconsistent      Two invocations that must agree (a file and its equivalent rewriting, run and
                  batch at the same temperature) differ in exit status.

The campaign prints the number of cases per subcommand and file kind, the number of findings
per class, and every finding (case id, command line, class, evidence). `--json FILE` writes
every case's result. The exit status is 1 when there are findings, 0 otherwise.
"""

from __future__ import annotations

import argparse
import concurrent.futures
import csv
import dataclasses
import hashlib
import io
import json
import os
import random
import re
import resource
import shutil
import signal
import stat
import subprocess
import sys
import tempfile
import time
import tomllib
import xml.etree.ElementTree as ET
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
MEMORY_LIMIT = 2 * 1024**3
FILE_SIZE_LIMIT = 1024**3
DEFAULT_TIMEOUT = 10.0
HUGE_TIMEOUT = 60.0
SPECIAL_TIMEOUT = 5.0  # special input paths: a hang there is a hang at once
SCAN_LIMIT = 64 * 1024**2
SENTINEL = b"SENTINEL: this file existed before stoik ran; a failed command must leave it.\n"
TMP = "@TMP@"  # replaced by the case's folder (absolute path) in files, stdin and argv

CLASSES = {
    "panic": ("exit 101 or 'panicked at' on stderr", "3"),
    "signal": ("death by a signal (not the timeout, not a resource limit)", "2"),
    "timeout": ("still running at the timeout", "2"),
    "memory": ("killed by the 2 GiB address-space limit", "2"),
    "file-size": ("killed by the 1 GiB file-size limit", "2"),
    "bad-exit": ("exit status outside 0, 1 (check --strict), 2, 3", "6"),
    "unlocated": ("exit 2 without file:line:column, the file or the flag", "6"),
    "check-misses": ("run/batch refused a scenario's content that check passes", "4"),
    "input-modified": ("an input file changed or disappeared", "1"),
    "output-destroyed": ("a pre-existing output lost its content on a failed command", "1"),
    "partial-write": ("exit 2 left a new file, or a temporary file was left", "1"),
    "nonfinite-output": ("NaN or infinity in a written file or on stdout", "3"),
    "unloadable-output": ("a written file does not load back", "5"),
    "output-collision": ("fewer distinct outputs than runs reported", "1"),
    "inconsistent": ("equivalent invocations disagree on the exit status", "4"),
    "alias-accepted": ("an output path resolving to an input was not refused (exit 2)", "1"),
}

FAMILIES = [
    "truncate", "byteflip", "utf8", "numbers", "flags", "extreme", "special", "alias",
    "collide", "names", "huge", "equivalent",
]


# ----------------------------------------------------------------------------------------
# Seed files
# ----------------------------------------------------------------------------------------


def load_seeds() -> dict[str, bytes]:
    """Every bundled file, keyed by its path inside a case folder."""
    seeds: dict[str, bytes] = {}
    mech = ROOT / "mechanisms"
    for p in sorted(mech.rglob("*")):
        if p.is_file():
            seeds[p.relative_to(mech).as_posix()] = p.read_bytes()
    for p in sorted((ROOT / "crates/thermo/tests/data/janaf").glob("*.tsv")):
        seeds["janaf/" + p.name] = p.read_bytes()
    return seeds


SEEDS = load_seeds()


def kind_of(rel: str) -> str:
    if rel.endswith(".scenario.toml"):
        return "scenario"
    if rel.endswith(".suite.toml"):
        return "suite"
    if rel.startswith("thermo/"):
        return "thermo"
    if rel.startswith("data/"):
        return "rate-data"
    if rel.startswith("janaf/"):
        return "janaf-table"
    return "mechanism"


def mechanism_of(scenario_rel: str) -> str:
    m = re.search(rb'^mechanism\s*=\s*"([^"]+)"', SEEDS[scenario_rel], re.M)
    assert m, scenario_rel
    return (Path(scenario_rel).parent / m.group(1).decode()).as_posix()


def thermo_of(mech_rel: str) -> list[str]:
    m = re.search(rb"^thermo_files\s*=\s*\[([^\]]*)\]", SEEDS.get(mech_rel, b""), re.M)
    if not m:
        return []
    return [(Path(mech_rel).parent / x.decode()).as_posix() for x in re.findall(rb'"([^"]+)"', m.group(1))]


def scenarios_of(suite_rel: str) -> list[str]:
    names = re.findall(rb'^scenario\s*=\s*"([^"]+)"', SEEDS[suite_rel], re.M)
    return [(Path(suite_rel).parent / n.decode()).as_posix() for n in names]


def deps(rel: str) -> list[str]:
    """The file and every bundled file it names."""
    out = [rel]
    if kind_of(rel) == "suite":
        for s in scenarios_of(rel):
            out += deps(s)
    elif kind_of(rel) == "scenario":
        out += deps(mechanism_of(rel))
    elif kind_of(rel) == "mechanism":
        out += thermo_of(rel)
    return out


def bundle(*rels: str) -> dict[str, bytes]:
    files: dict[str, bytes] = {}
    for r in rels:
        for d in deps(r):
            files[d] = SEEDS[d]
    return files


SCENARIOS = [r for r in SEEDS if kind_of(r) == "scenario"]
MECHANISMS = [r for r in SEEDS if kind_of(r) == "mechanism"]
SCENARIO_OF_MECH: dict[str, str] = {}
for _s in SCENARIOS:
    SCENARIO_OF_MECH.setdefault(mechanism_of(_s), _s)
SLOW = {"beckdo.scenario.toml"}  # about 5 s per run: its mutations go to `check` only


# ----------------------------------------------------------------------------------------
# Cases
# ----------------------------------------------------------------------------------------


@dataclasses.dataclass
class Case:
    id: str
    family: str
    command: str
    kind: str
    argv: list[str]
    files: dict[str, bytes]
    outputs: dict[str, bytes | None] = dataclasses.field(default_factory=dict)
    specials: list[tuple[str, str]] = dataclasses.field(default_factory=list)
    stdin: bytes | None = None
    locus: tuple[str, ...] = ("content",)
    flags: tuple[str, ...] = ()
    timeout: float = DEFAULT_TIMEOUT
    cross_check: str | None = None  # scenario to `check` when run/batch exits 2
    names: dict[str, list[str]] = dataclasses.field(default_factory=dict)  # output -> names
    expect_outputs: tuple[str, int] | None = None  # (glob, count) on exit 0
    reference: dict | None = None  # {argv, files, stdin, specials}: must agree on exit status
    must_refuse: bool = False  # an output path resolves to an input: exit 2 expected
    note: str = ""


def fmt_argv(argv: list[str]) -> str:
    import shlex

    return "stoik " + " ".join(shlex.quote(a) for a in argv)


class Gen:
    def __init__(self, seed: int):
        self.rng = random.Random(seed)
        self.cases: list[Case] = []
        self.counter: dict[str, int] = {}

    def add(self, family: str, command: str, kind: str, argv, files, **kw) -> Case:
        n = self.counter.get(family, 0) + 1
        self.counter[family] = n
        c = Case(f"{family}-{n:04d}", family, command, kind, list(argv), dict(files), **kw)
        self.cases.append(c)
        return c

    # -- the commands that read a file of each kind --------------------------------------

    def consumers(self, rel: str, content: bytes, family: str, locus=("content",), every=False):
        """Cases giving `content` (a replacement of bundled file `rel`) to the commands that
        read that kind of file: all of them with `every`, else one chosen at random."""
        before = len(self.cases)
        self._consumers(rel, content, family, locus)
        made = self.cases[before:]
        if not every and len(made) > 1:
            keep = self.rng.choice(made)
            del self.cases[before:]
            self.cases.append(keep)
            made = [keep]
        return made

    def _analysis(self, family: str, kind: str, files: dict, locus) -> list:
        """`rates` and `flux` on the hydrogen-oxygen scenario (whose species, elements and
        times are known) with `files` in place; their flags count as a location."""
        ho = "hydrogen-oxygen.scenario.toml"
        locus = tuple(locus) + ("flag",)
        flags = ("--species", "--times", "--window", "--element", "--time")
        return [
            self.add(family, "rates", kind, ["rates", ho, "--species", "OH,H", "--times", "1e-4", "--csv", "r.csv",
                                             "--report", "r.html"],
                     files, locus=locus, flags=flags, outputs={"r.csv": None, "r.html": None}),
            self.add(family, "flux", kind, ["flux", ho, "--element", "H", "--window", "0,1e-4", "--dot", "f.dot",
                                            "--report", "f.html"],
                     files, locus=locus, flags=flags, outputs={"f.dot": None, "f.html": None}),
        ]

    def _consumers(self, rel: str, content: bytes, family: str, locus=("content",)):
        kind = kind_of(rel)
        made = []
        sentinel = self.rng.random() < 0.5
        if rel in ("hydrogen-oxygen.scenario.toml", "hydrogen-oxygen.toml", "thermo/janaf-nasa7.toml"):
            files = bundle("hydrogen-oxygen.scenario.toml")
            files[rel] = content
            made += self._analysis(family, kind, files, locus)
        if kind == "suite":
            files = bundle(rel)
            files[rel] = content
            made.append(self.add(family, "suite", kind,
                                 ["suite", "record", rel, "-o", "out.baseline.toml", "--no-noise", "--quiet"],
                                 files, locus=locus,
                                 outputs={"out.baseline.toml": SENTINEL if sentinel else None}))
        if kind == "mechanism":
            files = bundle(rel)
            files[rel] = content
            made.append(self.add(family, "check", kind, ["check", rel], files, locus=locus))
            # `diff` reads both sides like `check`; the same file twice has no kinetic change.
            made.append(self.add(family, "diff", kind, ["diff", rel, rel], files, locus=locus))
            if thermo_of(rel):
                made.append(self.add(family, "energetics", kind, ["energetics", rel], files, locus=locus))
            scen = SCENARIO_OF_MECH.get(rel)
            if scen and scen not in SLOW:
                files = bundle(scen)
                files[rel] = content
                argv = ["run", scen, "-o", "out.csv"]
                made.append(self.add(family, "run", kind, argv, files, locus=locus,
                                     outputs={"out.csv": SENTINEL if sentinel else None},
                                     cross_check=scen))
        elif kind == "scenario":
            files = bundle(rel)
            files[rel] = content
            made.append(self.add(family, "check", kind, ["check", rel], files, locus=locus))
            if rel not in SLOW:
                made.append(self.add(family, "run", kind, ["run", rel, "-o", "out.csv"], files,
                                     locus=locus, outputs={"out.csv": SENTINEL if sentinel else None},
                                     cross_check=rel))
            if rel not in SLOW:
                stem = Path(rel).name[: -len(".scenario.toml")]
                made.append(self.add(family, "batch", kind, ["batch", rel, "--output-dir", "out", "-q"],
                                     files, locus=locus,
                                     outputs={f"out/{stem}.csv": SENTINEL if sentinel else None},
                                     cross_check=rel))
        elif kind == "thermo":
            mech = "hydrogen-oxygen.toml"
            files = bundle("hydrogen-oxygen.scenario.toml")
            files[rel] = content
            made.append(self.add(family, "check", kind, ["check", mech], files, locus=locus))
            made.append(self.add(family, "energetics", kind, ["energetics", mech], files, locus=locus))
            made.append(self.add(family, "run", kind, ["run", "hydrogen-oxygen.scenario.toml", "-o", "out.csv"],
                                 files, locus=locus, outputs={"out.csv": SENTINEL if sentinel else None},
                                 cross_check="hydrogen-oxygen.scenario.toml"))
        elif kind == "rate-data":
            files = {rel: content}
            made.append(self.add(family, "fit-rate", kind,
                                 ["fit-rate", rel, "--equation", "CH3CHO -> CH4 + CO",
                                  "--svg", "plot.svg", "--snippet", "step.toml"],
                                 files, locus=locus,
                                 outputs={"plot.svg": SENTINEL if sentinel else None,
                                          "step.toml": None if sentinel else SENTINEL}))
        elif kind == "janaf-table":
            other = "janaf/O2.tsv" if rel != "janaf/O2.tsv" else "janaf/N2.tsv"
            files = {rel: content, other: SEEDS[other]}
            made.append(self.add(family, "fit-thermo", kind, ["fit-thermo", rel, other, "-o", "fitted.toml"],
                                 files, locus=locus,
                                 outputs={"fitted.toml": SENTINEL if sentinel else None}))
        return made

    # -- families --------------------------------------------------------------------------

    def truncate(self):
        for rel, data in SEEDS.items():
            n = len(data)
            offsets = {0, n - 1, n // 2}
            lines = [m.end() for m in re.finditer(rb"\n", data)]
            if lines:
                offsets.add(self.rng.choice(lines) - 1)  # just before a newline
            tokens = [m.start() + 1 for m in re.finditer(rb'[=\["{,]', data)]
            if tokens:
                offsets.add(self.rng.choice(tokens))  # just after '=', '[', '"', '{' or ','
            for off in sorted(offsets):
                self.consumers(rel, data[:off], "truncate", every=(off == n // 2))

    def byteflip(self):
        specials = [b"\xff", b"\x00", b'"', b"[", b"\n", b"}", b"=", b"\x7f"]
        for rel, data in SEEDS.items():
            for _ in range(3):
                buf = bytearray(data)
                for _ in range(self.rng.randint(1, 3)):
                    i = self.rng.randrange(len(buf))
                    if self.rng.random() < 0.5:
                        buf[i] = self.rng.randrange(256)
                    else:
                        buf[i : i + 1] = self.rng.choice(specials)
                self.consumers(rel, bytes(buf), "byteflip")

    def utf8(self):
        bad = [b"\x80", b"\xc3", b"\xe2\x82", b"\xc0\xaf", b"\xff", b"\xed\xa0\x80"]
        for rel, data in SEEDS.items():
            text_lines = data.split(b"\n")
            spots = []
            for pattern in (rb"#", rb'"[^"\n]', rb"^[A-Za-z_]", rb"\d"):
                cands = [(i, m.end() - (1 if pattern != rb"#" else 0))
                         for i, line in enumerate(text_lines)
                         for m in [re.search(pattern, line)] if m]
                if cands:
                    spots.append(self.rng.choice(cands))
            for li, col in spots:
                lines = list(text_lines)
                line = lines[li]
                lines[li] = line[:col] + self.rng.choice(bad) + line[col:]
                self.consumers(rel, b"\n".join(lines), "utf8")

    EXTREMES = ["1e308", "-1e308", "1.8e308", "5e-324", "1e-320", "nan", "inf", "-inf", "-0",
                "0", "-1", "1e999", "1e-999", "9" * 400, "1e+99999"]
    NUMBER = re.compile(rb"(?<![A-Za-z0-9_.+\-])[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?(?![A-Za-z0-9_.])")

    def numbers(self):
        for rel, data in SEEDS.items():
            # numbers outside comments
            spans = []
            pos = 0
            for line in data.split(b"\n"):
                code = line.split(b"#", 1)[0] if kind_of(rel) not in ("janaf-table",) else line
                for m in self.NUMBER.finditer(code):
                    spans.append((pos + m.start(), pos + m.end()))
                pos += len(line) + 1
            if not spans:
                continue
            count = 3 if len(data) > 100_000 else 7
            for _ in range(count):
                a, b = self.rng.choice(spans)
                value = self.rng.choice(self.EXTREMES).encode()
                self.consumers(rel, data[:a] + value + data[b:], "numbers")

    def flags(self):
        values = self.EXTREMES + ["1e-300", "0.9999999999999999", "1", "300"]
        specs = [
            ("run", "--temperature-k", lambda v: ["run", "ozone-flask.scenario.toml", "-o", "out.csv", "--temperature-k", v], bundle("ozone-flask.scenario.toml"), "out.csv"),
            ("run", "--end-time-s", lambda v: ["run", "ozone-flask.scenario.toml", "-o", "out.csv", "--end-time-s", v], bundle("ozone-flask.scenario.toml"), "out.csv"),
            ("run", "--rtol", lambda v: ["run", "robertson.scenario.toml", "-o", "out.csv", "--rtol", v], bundle("robertson.scenario.toml"), "out.csv"),
            ("run", "--atol-mol-per-m3", lambda v: ["run", "robertson.scenario.toml", "-o", "out.csv", "--atol-mol-per-m3", v], bundle("robertson.scenario.toml"), "out.csv"),
            ("batch", "--temperatures-k", lambda v: ["batch", "ozone-flask.scenario.toml", "--output-dir", "out", "-q", f"--temperatures-k={v}"], bundle("ozone-flask.scenario.toml"), None),
            ("fit-thermo", "--common-temperature-k", lambda v: ["fit-thermo", "janaf/H2O.tsv", "-o", "t.toml", "--common-temperature-k", v], {"janaf/H2O.tsv": SEEDS["janaf/H2O.tsv"]}, "t.toml"),
            ("fit-thermo", "--low-k", lambda v: ["fit-thermo", "janaf/H2O.tsv", "-o", "t.toml", "--low-k", v], {"janaf/H2O.tsv": SEEDS["janaf/H2O.tsv"]}, "t.toml"),
            ("fit-thermo", "--high-k", lambda v: ["fit-thermo", "janaf/H2O.tsv", "-o", "t.toml", "--high-k", v], {"janaf/H2O.tsv": SEEDS["janaf/H2O.tsv"]}, "t.toml"),
            ("fit-rate", "--confidence", lambda v: ["fit-rate", "data/ethanal-decomposition.csv", "--svg", "p.svg", "--confidence", v], {"data/ethanal-decomposition.csv": SEEDS["data/ethanal-decomposition.csv"]}, "p.svg"),
            ("fit-rate", "--reference-temperature-k", lambda v: ["fit-rate", "data/ethanal-decomposition.csv", "--model", "modified", "--svg", "p.svg", "--reference-temperature-k", v], {"data/ethanal-decomposition.csv": SEEDS["data/ethanal-decomposition.csv"]}, "p.svg"),
            ("energetics", "--temperature-k", lambda v: ["energetics", "hydrogen-oxygen.toml", "--temperature-k", v], bundle("hydrogen-oxygen.toml"), None),
        ]
        for command, flag, make, files, out in specs:
            for v in values:
                argv = make(v)
                if v.startswith("-") and flag in argv:  # clap needs --flag=VALUE for "-1"
                    i = argv.index(flag)
                    argv[i : i + 2] = [f"{flag}={v}"]
                kind = {"run": "scenario", "batch": "scenario", "fit-thermo": "janaf-table",
                        "fit-rate": "rate-data", "energetics": "mechanism"}[command]
                outputs = {out: SENTINEL} if out and self.rng.random() < 0.5 else ({out: None} if out else {})
                self.add("flags", command, kind, argv, files, locus=("flag",), flags=(flag,), outputs=outputs)

    def extreme(self):
        oz = "ozone-flask.scenario.toml"
        ozs = SEEDS[oz].decode()
        urb = "urban-box.scenario.toml"
        urbs = SEEDS[urb].decode()
        ozm = SEEDS["ozone-flask.toml"].decode()

        def scen(name, text, base=oz):
            files = bundle(base)
            files[base] = text.encode()
            self.add("extreme", "run", "scenario", ["run", base, "-o", "out.csv"], files,
                     outputs={"out.csv": SENTINEL}, cross_check=base, note=name)
            self.add("extreme", "check", "scenario", ["check", "--strict", base], files, note=name)

        scen("all initial zero", ozs.replace("mole_fractions = { O3 = 0.02, O2 = 0.18, AR = 0.80 }",
                                             "concentrations = { O3 = 0.0, O2 = 0.0, AR = 0.0 }"))
        scen("T = 1e308 K", ozs.replace('temperature = "600 K"', 'temperature = "1e308 K"'))
        scen("P = 5e-324 Pa", ozs.replace('pressure = "1 atm"', 'pressure = "5e-324 Pa"'))
        scen("P = 1e308 Pa", ozs.replace('pressure = "1 atm"', 'pressure = "1e308 Pa"'))
        scen("T = 5e-324 K", ozs.replace('temperature = "600 K"', 'temperature = "5e-324 K"'))
        scen("end time 5e-324 s", ozs.replace('end_time = "1 s"', 'end_time = "5e-324 s"'))
        scen("end time 1e308 s", ozs.replace('end_time = "1 s"', 'end_time = "1e308 s"'))
        scen("first 5e-324 s", ozs.replace('first = "1e-6 s"', 'first = "5e-324 s"'))
        scen("max_steps 3", ozs + "max_steps = 3\n")
        scen("rtol 5e-324", ozs.replace("relative_tolerance = 1e-8", "relative_tolerance = 5e-324"))
        scen("atol 5e-324", ozs.replace('absolute_tolerance = "1e-20 mol/L"', 'absolute_tolerance = "5e-324 mol/L"'))
        scen("emission inf", urbs.replace('NO = "5.0e6 molecule/cm3/s"', 'NO = "inf molecule/cm3/s"'), urb)
        scen("emission negative", urbs.replace('NO = "5.0e6 molecule/cm3/s"', 'NO = "-5.0e6 molecule/cm3/s"'), urb)
        scen("deposition negative", urbs.replace('O3 = "1.0e-5 /s"', 'O3 = "-1.0e-5 /s"'), urb)
        scen("deposition 1e308", urbs.replace('O3 = "1.0e-5 /s"', 'O3 = "1e308 /s"'), urb)
        scen("cos_power negative", urbs.replace("cos_power = 0.244", "cos_power = -3.0"), urb)
        scen("no sun", re.sub(r"\[sun\][^\[]*", "", urbs), urb)
        scen("latitude 1e308", urbs.replace("latitude = 48.0", "latitude = 1e308"), urb)
        scen("day 1e9", urbs.replace("day_of_year = 172", "day_of_year = 1000000000"), urb)

        def mech(name, text):
            files = bundle(oz)
            files["ozone-flask.toml"] = text.encode()
            self.add("extreme", "run", "mechanism", ["run", oz, "-o", "out.csv"], files,
                     outputs={"out.csv": SENTINEL}, cross_check=oz, note=name)
            self.add("extreme", "check", "mechanism", ["check", "--strict", "ozone-flask.toml"], files, note=name)

        mech("Ea = -1e6 K", ozm.replace("activation_energy = 2060.0", "activation_energy = -1.0e6"))
        mech("A = 1.8e308", ozm.replace("prefactor = 8.0e-12", "prefactor = 1.7e308"))
        mech("n = 100, A = 1e300", ozm.replace("prefactor = 8.0e-12, activation_energy = 2060.0",
                                               "prefactor = 1e300, temperature_exponent = 100.0"))
        mech("n = -100", ozm.replace("temperature_exponent = -2.4", "temperature_exponent = -100.0"))
        mech("A = 5e-324", ozm.replace("prefactor = 8.0e-12", "prefactor = 5e-324"))
        ho = SEEDS["hydrogen-oxygen.toml"].decode()
        files = bundle("hydrogen-oxygen.scenario.toml")
        files["hydrogen-oxygen.toml"] = re.sub(r"prefactor = [0-9.eE+-]+", "prefactor = 1e300", ho, count=1).encode()
        self.add("extreme", "check", "mechanism", ["check", "--strict", "hydrogen-oxygen.toml"], files,
                 note="reverse kf/Kc overflow")
        self.add("extreme", "run", "mechanism", ["run", "hydrogen-oxygen.scenario.toml", "-o", "out.csv"], files,
                 outputs={"out.csv": SENTINEL}, cross_check="hydrogen-oxygen.scenario.toml",
                 note="reverse kf/Kc overflow")
        # rate data
        head = "temperature [K], rate_constant [dm3 mol-1 s-1]"

        def exact(t, a=1e12, ea=1.8e5):
            import math

            return a * math.exp(-ea / (8.314462618 * t))

        def rate(name, text, extra=(), flag=None):
            # A fault in a flag is located by naming the flag; one in the data by file:line:column.
            where = {"locus": ("flag",), "flags": (flag,)} if flag else {}
            self.add("extreme", "fit-rate", "rate-data",
                     ["fit-rate", "d.csv", "--svg", "p.svg", "--snippet", "s.toml", *extra],
                     {"d.csv": text.encode()}, outputs={"p.svg": SENTINEL, "s.toml": None}, note=name,
                     **where)

        temps = [700, 750, 800, 850, 900, 950, 1000]
        rate("noiseless", head + "\n" + "\n".join(f"{t}, {exact(t)!r}" for t in temps) + "\n")
        rate("noiseless modified", head + "\n" + "\n".join(f"{t}, {exact(t)!r}" for t in temps) + "\n", ("--model", "modified"))
        base = SEEDS["data/ethanal-decomposition.csv"].decode()
        rate("confidence 1-eps", base, ("--confidence", "0.9999999999999999"), flag="--confidence")
        rate("confidence 5e-324", base, ("--confidence", "5e-324"), flag="--confidence")
        rows = [l for l in base.splitlines() if l and l[0].isdigit()]
        for unc_head, small in (("uncertainty [%]", "1e-160"), ("uncertainty [dm3 mol-1 s-1]", "1e-300"),
                                ("uncertainty [factor]", "1.0000000000000002"), ("uncertainty [%]", "0"),
                                ("uncertainty [%]", "1e308"), ("uncertainty [factor]", "inf")):
            text = head + ", " + unc_head + "\n" + "\n".join(
                f"{r}, {small if i == 3 else ('10' if '%' in unc_head else ('1.2' if 'factor' in unc_head else '0.001'))}"
                for i, r in enumerate(rows)) + "\n"
            rate(f"uncertainty {small} {unc_head}", text)
        rate("two points modified", head + "\n700, 0.011\n1000, 145\n", ("--model", "modified"))
        rate("one temperature repeated", head + "\n" + "\n".join("800, 0.5" for _ in range(6)) + "\n")
        rate("k = 1e-320", head + "\n" + "\n".join(f"{t}, 1e-320" for t in temps) + "\n")
        rate("k spans 1e-300..1e300", head + "\n" + "\n".join(f"{t}, 1e{-300 + 100 * i}" for i, t in enumerate(temps)) + "\n")
        rate("T = 1e-300", head + "\n1e-300, 1\n800, 2\n900, 3\n")
        rate("T = 1e308", head + "\n700, 1\n800, 2\n1e308, 3\n")
        rate("empty data", head + "\n")
        for t in ("1e-320", "1e308", "5e-324", "0", "inf"):
            self.add("extreme", "energetics", "mechanism", ["energetics", "hydrogen-oxygen.toml", "--temperature-k", t],
                     bundle("hydrogen-oxygen.toml"), locus=("flag",), flags=("--temperature-k",), note=f"T {t}")

    def special(self):
        kinds = [
            ("fifo", "fifo.toml", [("fifo.toml", "fifo")], None),
            ("dev-zero", "/dev/zero", [], None),
            ("dev-urandom", "/dev/urandom", [], None),
            ("dev-null", "/dev/null", [], None),
            ("folder", "afolder.toml", [("afolder.toml", "dir")], None),
            ("missing", "missing.toml", [], None),
            ("symlink-loop", "loop.toml", [("loop.toml", "symlink:loop.toml")], None),
            ("dangling", "dangling.toml", [("dangling.toml", "symlink:nowhere.toml")], None),
            ("stdin-pipe", "/dev/stdin", [], "pipe"),
        ]
        oz = "ozone-flask.scenario.toml"
        for label, path, specials, pipe in kinds:
            def stdin_for(rel):
                if not pipe:
                    return None
                data = SEEDS[rel]
                if kind_of(rel) == "scenario":  # relative names would resolve against /dev
                    data = data.replace(b'mechanism = "', f'mechanism = "{TMP}/'.encode())
                return data

            positions = [
                ("check", "mechanism", ["check", path], {}, "ozone-flask.toml"),
                ("check", "scenario", ["check", path], bundle(oz), oz),
                ("run", "scenario", ["run", path, "-o", "out.csv"], bundle(oz), oz),
                ("batch", "scenario", ["batch", path, "--output-dir", "out", "-q"], bundle(oz), oz),
                ("fit-thermo", "janaf-table", ["fit-thermo", path, "-o", "t.toml"], {}, "janaf/H2O.tsv"),
                ("fit-rate", "rate-data", ["fit-rate", path, "--svg", "p.svg"], {}, "data/ethanal-decomposition.csv"),
                ("energetics", "mechanism", ["energetics", path], bundle("hydrogen-oxygen.toml"), "hydrogen-oxygen.toml"),
            ]
            for command, kind, argv, files, fed in positions:  # noqa: B007
                outs = {}
                if "-o" in argv:
                    outs[argv[argv.index("-o") + 1]] = SENTINEL
                if "--svg" in argv:
                    outs["p.svg"] = SENTINEL
                self.add("special", command, kind, argv, files, specials=specials, stdin=stdin_for(fed),
                         locus=("file",), flags=(path,), outputs=outs, note=label, timeout=SPECIAL_TIMEOUT)
            # referenced positions
            files = bundle(oz)
            files[oz] = SEEDS[oz].replace(b'mechanism = "ozone-flask.toml"', f'mechanism = "{path}"'.encode())
            for command, argv in (("check", ["check", oz]), ("run", ["run", oz, "-o", "out.csv"])):
                self.add("special", command, "scenario", argv, files, specials=specials,
                         stdin=stdin_for("ozone-flask.toml"), locus=("file", "content"), flags=(path,),
                         outputs={"out.csv": SENTINEL} if command == "run" else {}, note=label + " as mechanism",
                         timeout=SPECIAL_TIMEOUT)
            files = bundle("hydrogen-oxygen.scenario.toml")
            files["hydrogen-oxygen.toml"] = SEEDS["hydrogen-oxygen.toml"].replace(
                b'"thermo/janaf-nasa7.toml"', f'"{path}"'.encode())
            for command, argv in (("check", ["check", "hydrogen-oxygen.toml"]),
                                  ("energetics", ["energetics", "hydrogen-oxygen.toml"])):
                self.add("special", command, "thermo", argv, files, specials=specials,
                         stdin=stdin_for("thermo/janaf-nasa7.toml"), locus=("file", "content"), flags=(path,),
                         note=label + " as thermo file", timeout=SPECIAL_TIMEOUT)
        # special outputs
        ozf = bundle(oz)
        table = {"janaf/H2O.tsv": SEEDS["janaf/H2O.tsv"]}
        data = {"data/ethanal-decomposition.csv": SEEDS["data/ethanal-decomposition.csv"]}
        outs = [
            ("run", "scenario", ["run", oz, "-o", "afolder"], ozf, [("afolder", "dir")]),
            ("run", "scenario", ["run", oz, "-o", "no/such/dir/out.csv"], ozf, []),
            ("run", "scenario", ["run", oz, "-o", ""], ozf, []),
            ("run", "scenario", ["run", oz, "-o", "fifo.csv"], ozf, [("fifo.csv", "fifo")]),
            ("batch", "scenario", ["batch", oz, "--output-dir", "afile", "-q"], {**ozf, "afile": SENTINEL}, []),
            ("fit-thermo", "janaf-table", ["fit-thermo", "janaf/H2O.tsv", "-o", "afolder"], table, [("afolder", "dir")]),
            ("fit-thermo", "janaf-table", ["fit-thermo", "janaf/H2O.tsv", "-o", "no/dir/t.toml"], table, []),
            ("fit-rate", "rate-data", ["fit-rate", "data/ethanal-decomposition.csv", "--svg", "afolder"], data, [("afolder", "dir")]),
            ("fit-rate", "rate-data", ["fit-rate", "data/ethanal-decomposition.csv", "--snippet", "no/dir/s.toml"], data, []),
        ]
        for command, kind, argv, files, specials in outs:
            # the special output itself may be replaced (it is no input); what is checked is
            # the exit status, the message and that the inputs stay
            declared = {s: None for s, _ in specials}
            self.add("special", command, kind, argv, files, specials=specials, locus=("output",), outputs=declared,
                     flags=("-o", "--output", "--output-dir", "--svg", "--snippet", argv[-1] if argv[-1] != "-q" else argv[-2]),
                     note="special output path")

    def alias(self):
        oz = "ozone-flask.scenario.toml"
        ho = "hydrogen-oxygen.scenario.toml"
        spellings = [
            ("as given", lambda p: p, []),
            ("./", lambda p: "./" + p, []),
            ("sub/..", lambda p: "sub/../" + p, [("sub", "dir")]),
            ("absolute", lambda p: f"{TMP}/{p}", []),
            ("symlink", lambda p: "link.out", [("link.out", "symlink:@TARGET@")]),
        ]
        fail = "\n[solver]\nmax_steps = 3\n"
        targets = [
            ("run", oz, "scenario", oz, False), ("run", oz, "mechanism", "ozone-flask.toml", False),
            ("run", ho, "thermo", "thermo/janaf-nasa7.toml", False), ("run", oz, "scenario", oz, True),
            ("run", oz, "mechanism", "ozone-flask.toml", True),
        ]
        for command, scen, kind, target, failing in targets:
            for label, spell, specials in spellings:
                files = bundle(scen)
                if failing:
                    files[scen] = SEEDS[scen].replace(b"[solver]\n", b"[solver]\nmax_steps = 3\n")
                out = spell(target)
                specials = [(a, b.replace("@TARGET@", target)) for a, b in specials]
                links = {a: None for a, b in specials if b.startswith("symlink:")}
                self.add("alias", command, kind, ["run", scen, "-o", out], files, specials=specials, must_refuse=True,
                         outputs=links,
                         locus=("output",), flags=("-o", "--output", out, target),
                         note=f"-o the {kind} ({label}){' failing run' if failing else ''}")
        for label, spell, specials in spellings:
            t = "janaf/H2O.tsv"
            specials2 = [(a, b.replace("@TARGET@", t)) for a, b in specials]
            self.add("alias", "fit-thermo", "janaf-table", ["fit-thermo", t, "-o", spell(t)],
                     {t: SEEDS[t]}, specials=specials2, must_refuse=True,
                     outputs={a: None for a, b in specials2 if b.startswith("symlink:")}, locus=("output",), flags=("-o", "--output", spell(t), t),
                     note=f"fit-thermo TABLE -o TABLE ({label})")
            d = "data/ethanal-decomposition.csv"
            specials3 = [(a, b.replace("@TARGET@", d)) for a, b in specials]
            for flag in ("--svg", "--snippet"):
                self.add("alias", "fit-rate", "rate-data", ["fit-rate", d, flag, spell(d)],
                         {d: SEEDS[d]}, specials=specials3, must_refuse=True,
                         outputs={a: None for a, b in specials3 if b.startswith("symlink:")}, locus=("output",), flags=(flag, spell(d), d),
                         note=f"fit-rate d.csv {flag} d.csv ({label})")
        # a suite's baseline onto one of its inputs
        st = "hydrogen-oxygen.suite.toml"
        for target, kind in ((st, "suite"), ("hydrogen-oxygen.scenario.toml", "scenario"),
                             ("hydrogen-oxygen.toml", "mechanism"), ("thermo/janaf-nasa7.toml", "thermo")):
            for label, spell, specials in spellings:
                out = spell(target)
                specials2 = [(a, b.replace("@TARGET@", target)) for a, b in specials]
                self.add("alias", "suite", kind, ["suite", "record", st, "-o", out, "--no-noise", "-q"], bundle(st),
                         specials=specials2, must_refuse=True,
                         outputs={a: None for a, b in specials2 if b.startswith("symlink:")},
                         locus=("output",), flags=("-o", "--output", out, target),
                         note=f"suite record -o the {kind} ({label})")
        # rates, flux and sensitivity outputs onto their inputs
        for flag_args in (["rates", ho, "--species", "OH", "--times", "1e-4", "--csv"],
                          ["flux", ho, "--element", "H", "--time", "1e-4", "--dot"],
                          ["flux", ho, "--element", "H", "--time", "1e-4", "--svg"],
                          ["rates", ho, "--species", "OH", "--times", "1e-4", "--report"],
                          ["flux", ho, "--element", "H", "--time", "1e-4", "--report"],
                          ["run", ho, "-o", "ok.csv", "--report"],
                          ["sensitivity", ho, "--of", "ignition-delay", "--svg"],
                          ["sensitivity", ho, "--of", "ignition-delay", "--report"]):
            for target, kind in ((ho, "scenario"), ("hydrogen-oxygen.toml", "mechanism"),
                                 ("thermo/janaf-nasa7.toml", "thermo")):
                for label, spell, specials in spellings:
                    out = spell(target)
                    specials2 = [(a, b.replace("@TARGET@", target)) for a, b in specials]
                    self.add("alias", flag_args[0], kind, flag_args + [out], bundle(ho),
                             specials=specials2, must_refuse=True,
                             outputs={a: None for a, b in specials2 if b.startswith("symlink:")},
                             locus=("output",), flags=(flag_args[-1], out, target),
                             note=f"{flag_args[0]} {flag_args[-1]} the {kind} ({label})")
        # a mechanism named like the CSV that run (default output) and batch write
        files = bundle(oz)
        files["ozone-flask.csv"] = files.pop("ozone-flask.toml")
        files[oz] = SEEDS[oz].replace(b'"ozone-flask.toml"', b'"ozone-flask.csv"')
        self.add("alias", "run", "mechanism", ["run", oz], files, locus=("output",), must_refuse=True,
                 flags=("ozone-flask.csv", "-o", "--output"), note="default output is the mechanism")
        self.add("alias", "batch", "mechanism", ["batch", oz, "-q"], files, locus=("output",), must_refuse=True,
                 flags=("ozone-flask.csv", "--output-dir"), note="batch output is the mechanism")
        # the thermo file as a batch output
        files = bundle(ho)
        files["thermo/janaf-nasa7.csv"] = files.pop("thermo/janaf-nasa7.toml")
        files["hydrogen-oxygen.toml"] = SEEDS["hydrogen-oxygen.toml"].replace(b"janaf-nasa7.toml", b"janaf-nasa7.csv")
        files["thermo/janaf-nasa7.scenario.toml"] = SEEDS[ho].replace(b'"hydrogen-oxygen.toml"', b'"../hydrogen-oxygen.toml"')
        self.add("alias", "batch", "thermo", ["batch", "thermo/janaf-nasa7.scenario.toml", "--output-dir", "thermo", "-q"],
                 files, locus=("output",), must_refuse=True, flags=("janaf-nasa7.csv", "--output-dir"),
                 note="batch output is the thermo file")
        # one output fails after another was written
        d = "data/ethanal-decomposition.csv"
        self.add("alias", "fit-rate", "rate-data", ["fit-rate", d, "--snippet", "s.toml", "--svg", "no/dir/p.svg"],
                 {d: SEEDS[d]}, outputs={"s.toml": SENTINEL}, locus=("output",),
                 flags=("--svg", "no/dir/p.svg", "no/dir"), note="snippet then a bad svg path")
        self.add("alias", "fit-rate", "rate-data", ["fit-rate", d, "--svg", "p.svg", "--snippet", "no/dir/s.toml"],
                 {d: SEEDS[d]}, outputs={"p.svg": SENTINEL}, locus=("output",),
                 flags=("--snippet", "no/dir/s.toml", "no/dir"), note="svg then a bad snippet path")
        self.add("alias", "fit-thermo", "janaf-table", ["fit-thermo", "janaf/H2O.tsv", "janaf/bad.tsv", "-o", "t.toml"],
                 {"janaf/H2O.tsv": SEEDS["janaf/H2O.tsv"], "janaf/bad.tsv": SEEDS["janaf/H2O.tsv"][:300]},
                 outputs={"t.toml": SENTINEL}, note="second table bad")
        self.add("alias", "run", "scenario", ["run", oz, "-o", "out.csv", "--rtol", "2"], bundle(oz),
                 outputs={"out.csv": SENTINEL}, locus=("flag",), flags=("--rtol",), note="bad flag, existing output")
        self.add("alias", "run", "scenario", ["run", oz, "-o", "no/dir/out.csv", "--end-time-s", "100"], bundle(oz),
                 locus=("output",), flags=("-o", "--output", "no/dir"), note="output folder missing: checked before the run?")

    def collide(self):
        oz = "ozone-flask.scenario.toml"
        files = {}
        for sub in ("a", "b"):
            for r, d in bundle(oz).items():
                files[f"{sub}/{r}"] = d
        self.add("collide", "batch", "scenario", ["batch", f"a/{oz}", f"b/{oz}", "--output-dir", "out", "-q"], files,
                 locus=("output", "file"), flags=("--output-dir", oz, "ozone-flask.csv"), expect_outputs=("out/*.csv", 2),
                 note="two scenarios of one file name")
        self.add("collide", "batch", "scenario", ["batch", oz, oz, "--output-dir", "out", "-q"], bundle(oz),
                 locus=("output", "file"), flags=("--output-dir", oz), expect_outputs=("out/*.csv", 2), note="one scenario twice")
        self.add("collide", "batch", "scenario", ["batch", oz, "./" + oz, "--output-dir", "out", "-q"], bundle(oz),
                 locus=("output", "file"), flags=("--output-dir", oz), expect_outputs=("out/*.csv", 2), note="one scenario, two spellings")
        for temps, n in (("600,600.0,6e2", 3), ("600,600", 2), ("600,600.0000000000001", 2), ("1e300,1.0000000000000001e300", 2),
                         ("600,0600", 2)):
            self.add("collide", "batch", "scenario", ["batch", oz, "--output-dir", "out", "-q", "--temperatures-k", temps],
                     bundle(oz), locus=("flag",), flags=("--temperatures-k",), expect_outputs=("out/*.csv", n),
                     note=f"temperatures {temps}")
        h = SEEDS["janaf/H2O.tsv"]
        self.add("collide", "fit-thermo", "janaf-table", ["fit-thermo", "a/H2O.tsv", "b/H2O.tsv", "-o", "t.toml"],
                 {"a/H2O.tsv": h, "b/H2O.tsv": h}, locus=("file", "flag"), flags=("H2O", "--rename"),
                 names={"t.toml": ["H2O", "H2O"]}, note="two tables of one stem")
        self.add("collide", "fit-thermo", "janaf-table", ["fit-thermo", "H2O.tsv", "H2O.tsv", "-o", "t.toml"],
                 {"H2O.tsv": h}, locus=("file", "flag"), flags=("H2O",), names={"t.toml": ["H2O", "H2O"]},
                 note="one table twice")
        self.add("collide", "fit-thermo", "janaf-table",
                 ["fit-thermo", "H2O.tsv", "O2.tsv", "--rename", "H2O=X", "--rename", "O2=X", "-o", "t.toml"],
                 {"H2O.tsv": h, "O2.tsv": SEEDS["janaf/O2.tsv"]}, locus=("flag",), flags=("--rename", "X"),
                 names={"t.toml": ["X", "X"]}, note="two renames to one name")
        self.add("collide", "fit-thermo", "janaf-table",
                 ["fit-thermo", "H2O.tsv", "O2.tsv", "--rename", "H2O=O2", "-o", "t.toml"],
                 {"H2O.tsv": h, "O2.tsv": SEEDS["janaf/O2.tsv"]}, locus=("flag",), flags=("--rename", "O2"),
                 names={"t.toml": ["O2", "O2"]}, note="rename onto another table's stem")
        d = "data/ethanal-decomposition.csv"
        self.add("collide", "fit-rate", "rate-data", ["fit-rate", d, "--svg", "x.out", "--snippet", "x.out"],
                 {d: SEEDS[d]}, locus=("output", "flag"), flags=("--svg", "--snippet", "x.out"),
                 expect_outputs=("*.out", 2), note="svg and snippet to one path")

    def names(self):
        h = SEEDS["janaf/H2O.tsv"]
        hostile = ['A"B', "A\\B", "A\nB", "A'B", "A]B", "A#B", "A=B", "", " ", "Ω-H₂O", "A\tB",
                   '"""', "\\u0041", "A\rB", "x" * 5000, "A B", "[species]", "A\\\"B"]
        for name in hostile:
            self.add("names", "fit-thermo", "janaf-table", ["fit-thermo", "H2O.tsv", "--rename", f"H2O={name}", "-o", "t.toml"],
                     {"H2O.tsv": h}, locus=("flag",), flags=("--rename",), outputs={"t.toml": None},
                     names={"t.toml": [name]}, note=f"--rename {name!r}"[:60])
        for stem in ['A"B', "a\\b", "new\nline", "sp ace", "é", "H2O.tsv", "a#b", "[x]", "a'b"]:
            fname = f"{stem}.tsv"
            self.add("names", "fit-thermo", "janaf-table", ["fit-thermo", fname, "-o", "t.toml"], {fname: h},
                     locus=("file", "flag"), flags=(fname, stem, "--rename"), outputs={"t.toml": None},
                     names={"t.toml": [stem]}, note=f"table {fname!r}")
        d = "data/ethanal-decomposition.csv"
        for eq in ['A" -> B', "A\\ -> B", "A\n -> B", "A -> B\n[x]", "A -> B # c", '""" -> B', "A -> B'",
                   "CH3CHO -> CH4 + CO\n[[step]]\nequation = \"X -> Y\"", "A -> B\r", "A=>B"]:
            self.add("names", "fit-rate", "rate-data", ["fit-rate", d, "--equation", eq, "--snippet", "s.toml"],
                     {d: SEEDS[d]}, locus=("flag",), flags=("--equation",), outputs={"s.toml": None},
                     names={"s.toml": [eq]}, note=f"--equation {eq!r}"[:60])
        for stem in ['d"q', "d\n[x]", "d\\e", "d #c"]:
            fname = f"{stem}.csv"
            self.add("names", "fit-rate", "rate-data", ["fit-rate", fname, "--equation", "CH3CHO -> CH4 + CO",
                                                        "--snippet", "s.toml", "--svg", "p.svg"],
                     {fname: SEEDS[d]}, locus=("file",), flags=(fname,), outputs={"s.toml": None},
                     note=f"data file {fname!r}")
        # hostile species names in a mechanism, through the CSV header
        oz = "ozone-flask.scenario.toml"
        for new in ["O,X", 'O"X', "O'X", "O#X", "O\\\\X", "ÖX"]:
            files = bundle(oz)
            toml_name = new.replace('"', '\\"')
            m = SEEDS["ozone-flask.toml"].decode()
            m = m.replace('name = "O"', f'name = "{toml_name}"')
            m = m.replace("O2 + O\"", f"O2 + {toml_name}\"").replace('"O + O', f'"{toml_name} + O')
            files["ozone-flask.toml"] = m.encode()
            self.add("names", "run", "mechanism", ["run", oz, "-o", "out.csv"], files,
                     outputs={"out.csv": None}, cross_check=oz, note=f"species {new!r}")

    def huge(self):
        for scen in ("bruss.scenario.toml", "beckdo.scenario.toml"):
            text = SEEDS[scen].decode()
            text = re.sub(r"^times = .*$", "", text, flags=re.M)
            text = re.sub(r"^grid = .*$", "", text, flags=re.M)
            text = text.replace("[output]\n", '[output]\ngrid = { spacing = "linear", points = 10000000 }\n')
            files = bundle(scen)
            files[scen] = text.encode()
            self.add("huge", "run", "scenario", ["run", scen, "-o", "out.csv"], files, outputs={"out.csv": SENTINEL},
                     timeout=HUGE_TIMEOUT, cross_check=scen, note="10,000,000 output points")
            if scen == "bruss.scenario.toml":
                self.add("huge", "batch", "scenario", ["batch", scen, "--output-dir", "out", "-q"], files,
                         timeout=HUGE_TIMEOUT, cross_check=scen, note="10,000,000 output points")
        oz = "ozone-flask.scenario.toml"
        for pts in ("0", "1", "-1", "1000000000", "18446744073709551616", "1e7", "10000001"):
            files = bundle(oz)
            files[oz] = SEEDS[oz].replace(b"points = 61", f"points = {pts}".encode())
            self.add("huge", "run", "scenario", ["run", oz, "-o", "out.csv"], files, outputs={"out.csv": SENTINEL},
                     timeout=HUGE_TIMEOUT, cross_check=oz, note=f"points = {pts}")
        files = bundle(oz)
        files[oz] = SEEDS[oz].replace(b'end_time = "1 s"', b'end_time = "1 s"\ntimes = [' + b", ".join(
            str(i * 1e-7).encode() for i in range(1, 200001)) + b"]")
        self.add("huge", "run", "scenario", ["run", oz, "-o", "out.csv"], files, timeout=HUGE_TIMEOUT,
                 cross_check=oz, note="200,000 listed output times")
        for depth in (1000, 100000):
            for rel in ("ozone-flask.toml", oz):
                files = bundle(oz)
                files[rel] = SEEDS[rel] + b"\nnested = " + b"[" * depth + b"]" * depth + b"\n"
                self.add("huge", "check", kind_of(rel), ["check", rel], files, note=f"nesting {depth}")
            files = bundle(oz)
            files[oz] = SEEDS[oz] + b"\nnested = " + b"{a=" * depth + b"1" + b"}" * depth + b"\n"
            self.add("huge", "check", "scenario", ["check", oz], files, note=f"inline-table nesting {depth}")
        files = bundle(oz)
        files["ozone-flask.toml"] = b"# " + b"x" * (30 * 1024**2) + b"\n" + SEEDS["ozone-flask.toml"]
        self.add("huge", "check", "mechanism", ["check", "ozone-flask.toml"], files, note="30 MB comment line")
        d = "data/ethanal-decomposition.csv"
        self.add("huge", "fit-rate", "rate-data", ["fit-rate", d, "--svg", "p.svg"],
                 {d: SEEDS[d] + b"".join(f"{700 + (i % 300)}, {0.01 + i * 1e-6}\n".encode() for i in range(300000))},
                 outputs={"p.svg": None}, note="300,000 data rows")

    def equivalent(self):
        def pair(command, kind, argv, files, variant_files, stdin=None, ref_argv=None, note="", specials=()):
            self.add("equivalent", command, kind, argv, variant_files, stdin=stdin, specials=list(specials),
                     locus=("content", "file", "flag"),
                     flags=tuple(a.split("=")[0] for a in argv if a.startswith("-")) + ("/dev/stdin",),
                     reference={"argv": ref_argv or argv, "files": files}, note=note)

        for rel, data in SEEDS.items():
            crlf = data.replace(b"\r\n", b"\n").replace(b"\n", b"\r\n")
            k = kind_of(rel)
            if k in ("mechanism", "scenario"):
                files = bundle(rel)
                var = dict(files)
                var[rel] = crlf
                pair("check", k, ["check", rel], files, var, note="CRLF")
            elif k == "rate-data":
                pair("fit-rate", k, ["fit-rate", rel], {rel: data}, {rel: crlf}, note="CRLF")
            elif k == "janaf-table" and rel in ("janaf/H2O.tsv", "janaf/OH.tsv"):
                pair("fit-thermo", k, ["fit-thermo", rel, "-o", "t.toml"], {rel: data}, {rel: crlf}, note="CRLF")
            elif k == "thermo":
                files = bundle("hydrogen-oxygen.toml")
                var = dict(files)
                var[rel] = crlf
                pair("check", k, ["check", "hydrogen-oxygen.toml"], files, var, note="CRLF thermo")
        for rel in ("ozone-flask.toml", "robertson.toml", "hydrogen-oxygen.toml", "annotated-example.toml"):
            files = bundle(rel)
            data = SEEDS[rel]
            if rel in ("hydrogen-oxygen.toml", "annotated-example.toml"):
                data = data.replace(b'"thermo/', f'"{TMP}/thermo/'.encode())
            pair("check", "mechanism", ["check", "/dev/stdin"], files, files, stdin=data, ref_argv=["check", rel],
                 note="mechanism through a pipe")
        for rel in ("ozone-flask.scenario.toml", "robertson.scenario.toml"):
            files = bundle(rel)
            data = SEEDS[rel].replace(b'mechanism = "', f'mechanism = "{TMP}/'.encode())
            pair("check", "scenario", ["check", "/dev/stdin"], files, files, stdin=data, ref_argv=["check", rel],
                 note="scenario through a pipe")
            pair("run", "scenario", ["run", "/dev/stdin", "-o", "out.csv"], files, files, stdin=data,
                 ref_argv=["run", rel, "-o", "out.csv"], note="scenario through a pipe")
        files = bundle("hydrogen-oxygen.toml")
        pair("energetics", "mechanism", ["energetics", "/dev/stdin"], files, files,
             stdin=SEEDS["hydrogen-oxygen.toml"].replace(b'"thermo/', f'"{TMP}/thermo/'.encode()),
             ref_argv=["energetics", "hydrogen-oxygen.toml"], note="mechanism through a pipe")
        d = "data/ethanal-decomposition.csv"
        pair("fit-rate", "rate-data", ["fit-rate", "/dev/stdin"], {d: SEEDS[d]}, {}, stdin=SEEDS[d],
             ref_argv=["fit-rate", d], note="data through a pipe")
        pair("fit-thermo", "janaf-table", ["fit-thermo", "/dev/stdin", "-o", "t.toml", "--rename", "stdin=H2O"],
             {"janaf/H2O.tsv": SEEDS["janaf/H2O.tsv"]}, {}, stdin=SEEDS["janaf/H2O.tsv"],
             ref_argv=["fit-thermo", "janaf/H2O.tsv", "-o", "t.toml"], note="table through a pipe")
        # kind decided from the parsed document
        for rel in ("ozone-flask.toml", "robertson.toml"):
            files = bundle(rel)
            var = dict(files)
            var[rel] = SEEDS[rel].replace(b"stoik_mechanism = 1\n",
                                          b'stoik_mechanism = 1\ndescription = """\nstoik_scenario files name this mechanism.\n"""\n')
            pair("check", "mechanism", ["check", rel], files, var, note="description line starts stoik_scenario")
            var2 = dict(files)
            var2[rel] = SEEDS[rel].replace(b"stoik_mechanism = 1\n", b"stoik_mechanism = 1\n# stoik_scenario = 1\n")
            pair("check", "mechanism", ["check", rel], files, var2, note="comment line starts stoik_scenario")
        for rel in ("ozone-flask.scenario.toml", "robertson.scenario.toml", "e5.scenario.toml"):
            files = bundle(rel)
            for label, old, new in (("quoted key", b"stoik_scenario = 1", b'"stoik_scenario" = 1'),
                                    ("literal-quoted key", b"stoik_scenario = 1", b"'stoik_scenario' = 1"),
                                    ("no spaces", b"stoik_scenario = 1", b"stoik_scenario=1"),
                                    ("dotted table", b"[reactor]", b"[ reactor ]")):
                var = dict(files)
                var[rel] = SEEDS[rel].replace(old, new)
                pair("check", "scenario", ["check", rel], files, var, note=label)
            var = dict(files)
            var[rel] = SEEDS[rel].replace(b"stoik_scenario = 1", b'"stoik_scenario" = 1')
            pair("run", "scenario", ["run", rel, "-o", "out.csv"], files, var, note="quoted key")
        # odd folder names
        for folder in ("with space", "ünïcödé", "dash-", "a'quote"):
            files = bundle("ozone-flask.scenario.toml")
            var = {f"{folder}/{r}": d for r, d in files.items()}
            pair("run", "scenario", ["run", f"{folder}/ozone-flask.scenario.toml", "-o", f"{folder}/out.csv"], files, var,
                 ref_argv=["run", "ozone-flask.scenario.toml", "-o", "out.csv"], note=f"folder {folder!r}")
        # run and batch at the same temperature
        oz = "ozone-flask.scenario.toml"
        for t in ("600", "1e300", "5e-324", "nan", "inf", "0", "-5", "1e-3"):
            pair("batch", "scenario", ["batch", oz, "--output-dir", "out", "-q", f"--temperatures-k={t}"], bundle(oz), bundle(oz),
                 ref_argv=["run", oz, "-o", "out.csv", f"--temperature-k={t}"], note=f"batch vs run at {t} K")


def generate(seed: int) -> list[Case]:
    g = Gen(seed)
    for fam in FAMILIES:
        getattr(g, fam)()
    numbers: dict[str, int] = {}
    for c in g.cases:  # ids without the gaps left by discarded candidates
        numbers[c.family] = numbers.get(c.family, 0) + 1
        c.id = f"{c.family}-{numbers[c.family]:04d}"
    return g.cases


# ----------------------------------------------------------------------------------------
# Running a case
# ----------------------------------------------------------------------------------------


def limits():
    resource.setrlimit(resource.RLIMIT_AS, (MEMORY_LIMIT, MEMORY_LIMIT))
    resource.setrlimit(resource.RLIMIT_FSIZE, (FILE_SIZE_LIMIT, FILE_SIZE_LIMIT))
    resource.setrlimit(resource.RLIMIT_CORE, (0, 0))
    signal.signal(signal.SIGXFSZ, signal.SIG_DFL)
    signal.signal(signal.SIGPIPE, signal.SIG_DFL)


def sub(value, tmp: str):
    if isinstance(value, bytes):
        return value.replace(TMP.encode(), tmp.encode())
    return value.replace(TMP, tmp)


def populate(tmp: str, files: dict[str, bytes], specials, outputs) -> None:
    for rel, data in files.items():
        p = Path(tmp, rel)
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_bytes(sub(data, tmp))
    for rel, what in specials:
        p = Path(tmp, rel)
        p.parent.mkdir(parents=True, exist_ok=True)
        if what == "fifo":
            os.mkfifo(p)
        elif what == "dir":
            p.mkdir(exist_ok=True)
        elif what.startswith("symlink:"):
            os.symlink(what.split(":", 1)[1], p)
    for rel, data in outputs.items():
        if data is not None:
            p = Path(tmp, rel)
            p.parent.mkdir(parents=True, exist_ok=True)
            if not p.exists():
                p.write_bytes(data)


def snapshot(tmp: str) -> dict[str, str]:
    out = {}
    for dirpath, dirnames, filenames in os.walk(tmp):
        for name in filenames + [d for d in dirnames if os.path.islink(os.path.join(dirpath, d))]:
            p = os.path.join(dirpath, name)
            rel = os.path.relpath(p, tmp)
            try:
                st = os.lstat(p)
            except OSError:
                continue
            if stat.S_ISLNK(st.st_mode):
                out[rel] = "link:" + os.readlink(p)
            elif stat.S_ISREG(st.st_mode):
                h = hashlib.sha256()
                with open(p, "rb") as f:
                    for chunk in iter(lambda: f.read(1 << 20), b""):
                        h.update(chunk)
                out[rel] = h.hexdigest()
            elif stat.S_ISFIFO(st.st_mode):
                out[rel] = "fifo"
    return out


def execute(binary: str, argv: list[str], tmp: str, stdin: bytes | None, timeout: float) -> dict:
    out_path = os.path.join(tmp, ".campaign-stdout")
    err_path = os.path.join(tmp, ".campaign-stderr")
    start = time.monotonic()
    with open(out_path, "wb") as fo, open(err_path, "wb") as fe:
        proc = subprocess.Popen([binary] + [sub(a, tmp) for a in argv], cwd=tmp,
                                stdin=subprocess.PIPE if stdin is not None else subprocess.DEVNULL,
                                stdout=fo, stderr=fe, preexec_fn=limits, start_new_session=True,
                                env={**os.environ, "RUST_BACKTRACE": "0", "NO_COLOR": "1"})
    if stdin is not None:
        try:
            proc.stdin.write(sub(stdin, tmp))  # small payloads: fits the pipe buffer
        except (BrokenPipeError, OSError):
            pass
        try:
            proc.stdin.close()
        except OSError:
            pass
    timed_out = False
    while True:
        pid, status, ru = os.wait4(proc.pid, os.WNOHANG)
        if pid:
            break
        if time.monotonic() - start > timeout:
            timed_out = True
            try:
                os.killpg(proc.pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
            pid, status, ru = os.wait4(proc.pid, 0)
            break
        time.sleep(0.005)
    proc.returncode = 0  # reaped here; keep Popen from waiting again
    elapsed = time.monotonic() - start
    code = os.waitstatus_to_exitcode(status)
    with open(out_path, "rb") as f:
        stdout = f.read(1 << 20)
    with open(err_path, "rb") as f:
        stderr = f.read(1 << 20)
    os.remove(out_path)
    os.remove(err_path)
    return {"exit": code, "timed_out": timed_out, "seconds": round(elapsed, 3), "maxrss_kb": ru.ru_maxrss,
            "stdout": stdout.decode("utf-8", "replace"), "stderr": stderr.decode("utf-8", "replace")}


NONFINITE = re.compile(r"(?<![A-Za-z0-9_])[-+]?(?:nan|inf|infinity)(?![A-Za-z0-9_])", re.I)


def nonfinite_in(text: str) -> str | None:
    m = NONFINITE.search(text)
    if not m:
        return None
    line_no = text.count("\n", 0, m.start()) + 1
    line = text.splitlines()[line_no - 1] if text.splitlines() else ""
    return f"line {line_no}: {line.strip()[:100]!r}"


def located(case: Case, stderr: str, tmp: str) -> bool:
    names = set()
    for rel in case.files:
        names.add(rel)
        names.add(os.path.basename(rel))
    for a in case.argv:
        if not a.startswith("-") and a:
            names.add(sub(a, tmp))
            names.add(os.path.basename(sub(a, tmp)))
    names.discard("")
    lines = stderr.splitlines()
    for kind in case.locus:
        if kind == "content":
            for n in names:
                pat = re.compile(re.escape(n) + r"(?::\d+:\d+|.*\bline \d+.*\bcolumn \d+)")
                if any(pat.search(line) for line in lines):
                    return True
        elif kind in ("file", "flag", "output"):
            for token in case.flags:
                t = sub(token, tmp)
                if t and (t in stderr or os.path.basename(t) and os.path.basename(t) in stderr):
                    return True
            if kind == "output":
                for flag in ("-o", "--output", "--output-dir", "--svg", "--snippet", "--csv", "--dot", "--report"):
                    if re.search(r"(?<![\w-])" + re.escape(flag) + r"(?![\w-])", stderr):
                        return True
    return False


def written_files(tmp: str, before: dict, after: dict) -> list[str]:
    return [r for r, h in after.items() if before.get(r) != h and not h.startswith(("link:", "fifo"))]


UNDEFINED_MOLE_FRACTIONS = re.compile(r"warning: (\S+): the total concentration is not positive in \d+ row\(s\).*written as `nan`")


def undefined_cells_only(text: str, warned: bool) -> bool:
    """Whether every NaN of a CSV lies in its mole-fraction columns and stoik warned about
    them: the documented marker of an undefined mole fraction (total concentration not
    positive), not a silent NaN (docs/file-format.md, CSV output)."""
    if not warned:
        return False
    lines = text.splitlines()
    if not lines:
        return False
    header = lines[0].split(",")
    allowed = {i for i, h in enumerate(header) if "[mole fraction]" in h}
    for line in lines[1:]:
        for i, cell in enumerate(line.split(",")):
            if NONFINITE.fullmatch(cell.strip()) and i not in allowed:
                return False
    return True


def check_loadback(binary: str, case: Case, tmp: str, rel: str, findings: list, stderr: str = "") -> None:
    path = os.path.join(tmp, rel)
    try:
        with open(path, "rb") as f:
            data = f.read(SCAN_LIMIT)
    except OSError:
        return
    text = data.decode("utf-8", "replace")
    bad = nonfinite_in(text)
    warned = any(os.path.basename(m.group(1)) == os.path.basename(rel)
                 for m in UNDEFINED_MOLE_FRACTIONS.finditer(stderr))
    if bad and not undefined_cells_only(text, warned):
        findings.append(("nonfinite-output", f"{rel}: {bad}"))
    if b"\xef\xbf\xbd" not in data and "\ufffd" in text:
        findings.append(("unloadable-output", f"{rel}: not UTF-8"))
        return
    if rel.endswith(".toml") or rel in case.names:
        try:
            doc = tomllib.loads(text)
        except tomllib.TOMLDecodeError as e:
            findings.append(("unloadable-output", f"{rel}: TOML does not parse: {e}"))
            return
        if rel in case.names:
            if "species" in doc:
                got = [s.get("name") for s in doc.get("species", [])]
                want = case.names[rel]
                if case.family == "collide":
                    if len(set(got)) < len(got) or len(got) < len(want):
                        findings.append(("output-collision", f"{rel}: species names {got!r} for {len(want)} tables"))
                elif got != want:
                    findings.append(("unloadable-output", f"{rel}: species names {got!r}, asked for {want!r}"))
            elif "step" in doc:
                got = [s.get("equation") for s in doc.get("step", [])]
                if got != case.names[rel]:
                    findings.append(("unloadable-output", f"{rel}: equations {got!r}, asked for {case.names[rel]!r}"))
        # semantic load: a snippet of the ethanal step, inside a small mechanism
        steps = doc.get("step")
        if isinstance(steps, list) and steps and all(s.get("equation") == "CH3CHO -> CH4 + CO" for s in steps):
            mech = ("stoik_mechanism = 1\n[[species]]\nname = \"CH3CHO\"\natoms = { C = 2, H = 4, O = 1 }\n"
                    "[[species]]\nname = \"CH4\"\natoms = { C = 1, H = 4 }\n"
                    "[[species]]\nname = \"CO\"\natoms = { C = 1, O = 1 }\n\n") + text
            wrap = os.path.join(os.path.dirname(path), ".campaign-wrap.toml")
            Path(wrap).write_text(mech)
            r = execute(binary, ["check", wrap], tmp, None, DEFAULT_TIMEOUT)
            os.remove(wrap)
            if r["exit"] != 0:
                findings.append(("unloadable-output", f"{rel}: stoik check of a mechanism made of it exits {r['exit']}: {r['stderr'].strip()[:200]}"))
        # semantic load: a fitted thermo file of plain names, inside a small mechanism
        if "species" in doc and all(isinstance(s.get("name"), str) and re.fullmatch(r"[A-Z][A-Za-z0-9]*", s["name"])
                                    for s in doc["species"]) and doc["species"]:
            atoms_of = {"H2O": "{ H = 2, O = 1 }", "O2": "{ O = 2 }", "N2": "{ N = 2 }", "OH": "{ O = 1, H = 1 }",
                        "H2": "{ H = 2 }", "H": "{ H = 1 }", "O": "{ O = 1 }", "HO2": "{ H = 1, O = 2 }", "Ar": "{ Ar = 1 }"}
            names = [s["name"] for s in doc["species"]]
            if all(n in atoms_of for n in names) and len(set(names)) == len(names):
                mech = ["stoik_mechanism = 1", f'thermo_files = ["{os.path.basename(rel)}"]']
                for n in names:
                    mech += ["[[species]]", f'name = "{n}"', f"atoms = {atoms_of[n]}"]
                mech += ["[[step]]", f'equation = "{names[0]} <=> {names[0]}"' if False else f'equation = "{names[0]} + {names[0]} -> {names[0]} + {names[0]}"',
                         "forward = { prefactor = 1.0 }"]
                wrap = os.path.join(os.path.dirname(path), ".campaign-wrap.toml")
                Path(wrap).write_text("\n".join(mech) + "\n")
                r = execute(binary, ["check", wrap], tmp, None, DEFAULT_TIMEOUT)
                os.remove(wrap)
                if r["exit"] not in (0,):
                    findings.append(("unloadable-output", f"{rel}: stoik check of a mechanism naming it exits {r['exit']}: {r['stderr'].strip()[:200]}"))
    elif rel.endswith(".csv"):
        rows = list(csv.reader(io.StringIO(text)))
        if not rows:
            findings.append(("unloadable-output", f"{rel}: empty CSV"))
            return
        width = len(rows[0])
        # The CSV of `stoik rates` has text columns (species, equation, unit); every other
        # column of every CSV is a number.
        text_columns = {i for i, h in enumerate(rows[0]) if h in ("species", "equation", "unit")} \
            if rows[0][:1] == ["species"] else set()
        for i, row in enumerate(rows[1:], start=2):
            if len(row) != width:
                findings.append(("unloadable-output", f"{rel}: line {i} has {len(row)} fields, header {width}"))
                break
            try:
                [float(x) for j, x in enumerate(row) if j not in text_columns]
            except ValueError:
                findings.append(("unloadable-output", f"{rel}: line {i} has a cell that is not a number: {row[:4]!r}"))
                break
    elif rel.endswith(".svg"):
        try:
            ET.fromstring(data)
        except ET.ParseError as e:
            findings.append(("unloadable-output", f"{rel}: SVG is not well-formed XML: {e}"))
    elif rel.endswith(".html"):
        # A report: one complete page whose inline SVG figures are well-formed XML.
        page = data.decode("utf-8", errors="replace")
        if not page.startswith("<!DOCTYPE html>") or not page.rstrip().endswith("</html>"):
            findings.append(("unloadable-output", f"{rel}: not one complete HTML page"))
        for k, m in enumerate(re.finditer(r"<svg\b.*?</svg>", page, re.S)):
            try:
                ET.fromstring(m.group(0))
            except ET.ParseError as e:
                findings.append(("unloadable-output", f"{rel}: figure {k + 1} is not well-formed XML: {e}"))
                break


def run_case(binary: str, case: Case, tmp_root: str | None = None) -> dict:
    tmp = tempfile.mkdtemp(prefix="stoik-hostile-", dir=tmp_root)
    findings: list[tuple[str, str]] = []
    try:
        populate(tmp, case.files, case.specials, case.outputs)
        before = snapshot(tmp)
        r = execute(binary, case.argv, tmp, case.stdin, case.timeout)
        after = snapshot(tmp)
        code, err = r["exit"], r["stderr"]
        strict = "--strict" in case.argv
        mem_msg = re.search(r"memory allocation of \d+ bytes failed|out of memory|capacity overflow|cannot allocate", err, re.I)
        if r["timed_out"]:
            findings.append(("timeout", f"killed after {case.timeout:g} s (peak {r['maxrss_kb'] // 1024} MiB)"))
        elif mem_msg or (code in (-signal.SIGABRT, -signal.SIGSEGV, -signal.SIGKILL, -signal.SIGBUS)
                         and r["maxrss_kb"] * 1024 > MEMORY_LIMIT // 2):
            findings.append(("memory", (mem_msg.group(0) if mem_msg else f"signal {-code}") + f", peak {r['maxrss_kb'] // 1024} MiB"))
        elif code == -signal.SIGXFSZ:
            findings.append(("file-size", "SIGXFSZ: an output exceeded 1 GiB"))
        elif code < 0:
            findings.append(("signal", f"killed by signal {signal.Signals(-code).name}: {err.strip()[-200:]}"))
        if code == 101 or "panicked at" in err:
            m = re.search(r"panicked at [^\n]*\n?[^\n]*", err)
            findings.append(("panic", m.group(0).strip()[:240] if m else f"exit 101: {err.strip()[:200]}"))
        # `diff` exits 1 for kinetic changes, `suite verify` 4 for a moved observable.
        allowed = {"diff": (1,), "suite": (4,)}.get(case.command, ())
        if code >= 0 and code not in (0, 2, 3, 101) and not (code == 1 and strict) and code not in allowed:
            findings.append(("bad-exit", f"exit {code}: {err.strip()[:200]}"))
        if case.must_refuse and code != 2 and not r["timed_out"]:
            findings.append(("alias-accepted", f"exit {code}: {(err.strip() or r['stdout'].strip())[:160]!r}"))
        if code == 2 and not located(case, err, tmp):
            findings.append(("unlocated", f"exit 2: {err.strip()[:240]!r}"))
        # inputs and outputs
        declared = set(case.outputs)
        for rel, h in before.items():
            if rel.startswith(".campaign"):
                continue
            is_input = rel in case.files or not (rel in declared)
            if rel in declared and rel not in case.files and not h.startswith(("link:", "fifo")):
                if code != 0 and after.get(rel) != h:
                    findings.append(("output-destroyed", f"{rel}: sentinel {'gone' if rel not in after else 'overwritten'} after exit {code}"))
                continue
            if is_input and after.get(rel) != h:
                findings.append(("input-modified", f"{rel}: {'deleted' if rel not in after else 'content changed'} (exit {code})"))
        new = written_files(tmp, before, after)
        tmp_left = [r for r in after if r.endswith(".tmp") and r not in before]
        if tmp_left and not r["timed_out"]:  # our SIGKILL leaves them legitimately
            findings.append(("partial-write", f"temporary files left: {tmp_left[:3]}"))
        if code == 2 and case.command != "batch":
            created = [n for n in new if n not in before]
            if created:
                findings.append(("partial-write", f"exit 2 but wrote {created[:3]}"))
        if code in (0, 1, 3):
            bad = nonfinite_in(r["stdout"])
            if bad:
                findings.append(("nonfinite-output", f"stdout {bad}"))
        for rel in new:
            if rel in case.files:
                continue
            check_loadback(binary, case, tmp, rel, findings, err)
        if case.expect_outputs and code == 0:
            pattern, n = case.expect_outputs
            got = [p for p in Path(tmp).glob(pattern) if p.is_file() and Path(p).read_bytes() != SENTINEL]
            if len(got) < n:
                findings.append(("output-collision", f"exit 0 with {len(got)} file(s) matching {pattern}, {n} expected: {sorted(p.name for p in got)}"))
        # check must find what run finds
        if case.cross_check and code == 2 and case.command in ("run", "batch") and "flag" not in case.locus \
                and "output" not in case.locus and os.path.isfile(os.path.join(tmp, case.cross_check)):
            c = execute(binary, ["check", case.cross_check], tmp, None, DEFAULT_TIMEOUT)
            if c["exit"] == 0:
                findings.append(("check-misses", f"{case.command} exit 2 ({err.strip()[:160]!r}) but check exits 0"))
        reference_exit = None
        if case.reference:
            rtmp = tempfile.mkdtemp(prefix="stoik-hostile-ref-", dir=tmp_root)
            try:
                populate(rtmp, case.reference["files"], [], {})
                rr = execute(binary, case.reference["argv"], rtmp, None, case.timeout)
                reference_exit = rr["exit"]
                if (rr["exit"] == 0) != (code == 0) or (rr["exit"] != code and not rr["timed_out"] and not r["timed_out"]):
                    findings.append(("inconsistent", f"exit {code}, but {fmt_argv(case.reference['argv'])} exits {rr['exit']}; "
                                                     f"stderr: {err.strip()[:160]!r}"))
            finally:
                shutil.rmtree(rtmp, ignore_errors=True)
        # dedupe (several loadback checks may report the same class on one file)
        seen, unique = set(), []
        for f in findings:
            if f not in seen:
                seen.add(f)
                unique.append(f)
        return {"id": case.id, "family": case.family, "command": case.command, "kind": case.kind,
                "argv": fmt_argv(case.argv), "note": case.note, "exit": code, "seconds": r["seconds"],
                "maxrss_kb": r["maxrss_kb"], "reference_exit": reference_exit,
                "findings": [{"class": c, "evidence": e} for c, e in unique],
                "stderr": err[:2000], "stdout": r["stdout"][:500]}
    finally:
        # FIFOs and folders left by the command are removed with the rest
        shutil.rmtree(tmp, ignore_errors=True)


# ----------------------------------------------------------------------------------------
# Main
# ----------------------------------------------------------------------------------------


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0], formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("binary", nargs="?", default=str(ROOT / "target/release/stoik"))
    ap.add_argument("--seed", type=int, default=12)
    ap.add_argument("--max-cases", type=int, default=None, help="run only the first N cases (in generation order)")
    ap.add_argument("--only", default=None, help="report only findings of this class")
    ap.add_argument("--family", default=None, help="run only this case family")
    ap.add_argument("--json", default=None, help="write every case's result to this file")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--timeout", type=float, default=DEFAULT_TIMEOUT, help="seconds per case (huge grids: 60)")
    ap.add_argument("--tmp-dir", default=None,
                    help="folder for the case folders [default: /dev/shm when writable, else the system's]")
    ap.add_argument("--known", default=None,
                    help="file of open findings ('CASE-ID CLASS  # reason' per line): they are reported "
                         "but do not fail the run; a listed finding that no longer occurs is reported too")
    ap.add_argument("--list-classes", action="store_true")
    ap.add_argument("--list-families", action="store_true")
    ap.add_argument("--quiet", action="store_true", help="no progress line")
    args = ap.parse_args()
    if args.list_classes:
        for name, (desc, section) in CLASSES.items():
            print(f"{name:18} issue 12 section {section}: {desc}")
        return 0
    if args.list_families:
        print("\n".join(FAMILIES))
        return 0
    if args.only and args.only not in CLASSES:
        ap.error(f"--only: unknown class {args.only!r}; see --list-classes")
    binary = os.path.abspath(args.binary)
    if not os.access(binary, os.X_OK):
        ap.error(f"no executable stoik at {binary} (build with cargo build --release)")
    tmp_root = args.tmp_dir
    if tmp_root is None and os.path.isdir("/dev/shm") and os.access("/dev/shm", os.W_OK):
        tmp_root = "/dev/shm"
    cases = generate(args.seed)
    if args.family:
        cases = [c for c in cases if c.family == args.family]
    if args.max_cases is not None:
        cases = cases[: args.max_cases]
    for c in cases:
        if c.timeout == DEFAULT_TIMEOUT:
            c.timeout = args.timeout
    started = time.monotonic()
    results = []
    # long cases first so the pool ends together
    order = sorted(cases, key=lambda c: -c.timeout)
    with concurrent.futures.ProcessPoolExecutor(max_workers=args.workers) as pool:
        futures = {pool.submit(run_case, binary, c, tmp_root): c for c in order}
        for i, fut in enumerate(concurrent.futures.as_completed(futures), 1):
            c = futures[fut]
            try:
                results.append(fut.result())
            except Exception as e:  # a campaign bug, not a stoik finding: report and go on
                results.append({"id": c.id, "family": c.family, "command": c.command, "kind": c.kind,
                                "argv": fmt_argv(c.argv), "note": c.note, "exit": None, "seconds": 0,
                                "findings": [], "error": repr(e)})
            if not args.quiet and sys.stderr.isatty():
                print(f"\r{i}/{len(cases)}", end="", file=sys.stderr, flush=True)
    if not args.quiet and sys.stderr.isatty():
        print(file=sys.stderr)
    elapsed = time.monotonic() - started
    results.sort(key=lambda r: (FAMILIES.index(r["family"]), r["id"]))
    if args.only:
        for r in results:
            r["findings"] = [f for f in r["findings"] if f["class"] == args.only]

    by_cmd: dict[str, int] = {}
    by_kind: dict[str, int] = {}
    by_family: dict[str, int] = {}
    for r in results:
        by_cmd[r["command"]] = by_cmd.get(r["command"], 0) + 1
        by_kind[r["kind"]] = by_kind.get(r["kind"], 0) + 1
        by_family[r["family"]] = by_family.get(r["family"], 0) + 1
    counts = {k: 0 for k in CLASSES}
    for r in results:
        for f in r["findings"]:
            counts[f["class"]] += 1
    errors = [r for r in results if r.get("error")]
    print(f"stoik hostile-input campaign: {len(results)} cases, seed {args.seed}, {elapsed:.0f} s, binary {binary}")
    print("cases per subcommand: " + ", ".join(f"{k} {v}" for k, v in sorted(by_cmd.items())))
    print("cases per file kind:  " + ", ".join(f"{k} {v}" for k, v in sorted(by_kind.items())))
    print("cases per family:     " + ", ".join(f"{k} {by_family[k]}" for k in FAMILIES if k in by_family))
    exit_counts: dict[str, int] = {}
    for r in results:
        exit_counts[str(r["exit"])] = exit_counts.get(str(r["exit"]), 0) + 1
    print("exit statuses:        " + ", ".join(f"{k}: {v}" for k, v in sorted(exit_counts.items())))
    print("findings per class:")
    for k, n in counts.items():
        if args.only and k != args.only:
            continue
        print(f"  {k:18} {n:5}   (issue 12 section {CLASSES[k][1]}: {CLASSES[k][0]})")
    total = sum(counts.values())
    cases_with = sum(1 for r in results if r["findings"])
    print(f"total: {total} finding(s) in {cases_with} case(s)")
    if errors:
        print(f"campaign errors (bugs of this script): {len(errors)}")
        for r in errors:
            print(f"  {r['id']}: {r['error']}")
    if total:
        print("\nfindings:")
        for r in results:
            for f in r["findings"]:
                note = f" [{r['note']}]" if r.get("note") else ""
                print(f"{r['id']} {f['class']}{note}\n    {r['argv']!s:.300}\n    {f['evidence']!s:.400}")
    if args.json:
        with open(args.json, "w") as fh:
            json.dump({"seed": args.seed, "binary": binary, "seconds": round(elapsed, 1), "counts": counts,
                       "cases_per_command": by_cmd, "cases_per_kind": by_kind, "cases_per_family": by_family,
                       "results": results}, fh, indent=1)
    if args.known:
        known = set()
        with open(args.known) as fh:
            for line in fh:
                words = line.split("#", 1)[0].split()
                if len(words) >= 2:
                    known.add((words[0], words[1]))
        found = {(r["id"], f["class"]) for r in results for f in r["findings"]}
        new = sorted(found - known)
        gone = sorted(known - found)
        print(f"\nknown open findings ({args.known}): {len(found & known)} still open, "
              f"{len(gone)} no longer found, {len(new)} new")
        for case, cls in gone:
            print(f"  no longer found: {case} {cls} (remove it from the list)")
        for case, cls in new:
            print(f"  NEW: {case} {cls}")
        return 1 if new or errors else 0
    return 1 if total or errors else 0


if __name__ == "__main__":
    sys.exit(main())
