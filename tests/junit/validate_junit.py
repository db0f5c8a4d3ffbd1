#!/usr/bin/env python3
"""Validates the JUnit XML of `stoik suite verify` against a published JUnit XML schema.

Schema: `junit-10.xsd`, the JUnit schema of the Jenkins xUnit plugin (Gregory Boissinot,
MIT licence), as shipped in the source distribution of pytest on PyPI
(`testing/example_scripts/junit-10.xsd`; pytest validates its own JUnit output against it).
It is not kept in this repository: the script downloads the pinned pytest source
distribution with pip into a temporary folder, or reads the schema from $STOIK_JUNIT_XSD.
Validation uses the `xmlschema` package (PyPI).

The report checked holds every status a suite can give: observables that pass, that moved
beyond tolerance (a rate constant of the bundled hydrogen mechanism doubled), and an
observable that gives no value (a level never reached).

Usage: validate_junit.py PATH/TO/stoik
Exit 0 when valid, 1 when not (the schema's complaint printed), 2 when the check cannot run.
"""

import os
import pathlib
import shutil
import subprocess
import sys
import tarfile
import tempfile

PYTEST_SDIST = "pytest==8.3.4"
SCHEMA_IN_SDIST = "pytest-8.3.4/testing/example_scripts/junit-10.xsd"


def fetch_schema(work: pathlib.Path) -> pathlib.Path:
    given = os.environ.get("STOIK_JUNIT_XSD")
    if given:
        return pathlib.Path(given)
    subprocess.run(
        [sys.executable, "-m", "pip", "download", "--quiet", "--no-binary", ":all:",
         "--no-deps", "--dest", str(work), PYTEST_SDIST],
        check=True,
    )
    sdist = next(work.glob("pytest-*.tar.gz"))
    with tarfile.open(sdist) as tar:
        member = tar.getmember(SCHEMA_IN_SDIST)
        data = tar.extractfile(member).read()
    path = work / "junit-10.xsd"
    path.write_bytes(data)
    return path


def main() -> int:
    if len(sys.argv) != 2:
        print(__doc__, file=sys.stderr)
        return 2
    stoik = pathlib.Path(sys.argv[1]).resolve()
    repo = pathlib.Path(__file__).resolve().parents[2]
    try:
        import xmlschema
    except ImportError:
        print("error: the `xmlschema` package is needed (pip install xmlschema)", file=sys.stderr)
        return 2
    with tempfile.TemporaryDirectory(prefix="stoik-junit-") as tmp:
        work = pathlib.Path(tmp)
        schema = xmlschema.XMLSchema(str(fetch_schema(work)))
        m = work / "m"
        (m / "thermo").mkdir(parents=True)
        for name in ["hydrogen-oxygen.toml", "hydrogen-oxygen.scenario.toml"]:
            shutil.copy(repo / "mechanisms" / name, m / name)
        shutil.copy(repo / "mechanisms/thermo/janaf-nasa7.toml", m / "thermo/janaf-nasa7.toml")
        suite = (repo / "mechanisms/hydrogen-oxygen.suite.toml").read_text()
        # One observable that never gives a value (H2 never rises to 1e9 mol/m3): an error.
        suite += (
            '\n[[case.observable]]\nname = "H2 never this high"\nkind = "crossing-time"\n'
            'species = "H2"\nlevel = "1e9 mol/m3"\n'
        )
        (m / "h2.suite.toml").write_text(suite)
        run = lambda *a: subprocess.run([str(stoik), *a], cwd=m, capture_output=True, text=True)
        rec = run("suite", "record", "h2.suite.toml", "--no-noise", "--quiet")
        if rec.returncode not in (0, 3):
            print(rec.stderr, file=sys.stderr)
            return 2
        mech = m / "hydrogen-oxygen.toml"
        mech.write_text(mech.read_text().replace("prefactor = 3.547e15", "prefactor = 7.094e15", 1))
        ver = run("suite", "verify", "h2.suite.toml", "--junit", "report.xml", "--quiet")
        if ver.returncode != 4:
            print(f"error: verify exited {ver.returncode}, expected 4\n{ver.stderr}", file=sys.stderr)
            return 1
        xml = (m / "report.xml").read_text()
        errors = list(schema.iter_errors(xml))
        for e in errors:
            print(f"invalid: {e.reason} at {e.path}", file=sys.stderr)
        counts = {k: xml.count(f"<{k}") for k in ["testcase", "failure", "error"]}
        print(f"JUnit report: {counts['testcase']} test cases, {counts['failure']} failures, "
              f"{counts['error']} errors; {'valid' if not errors else 'INVALID'} against junit-10.xsd")
        if errors or counts["failure"] == 0 or counts["error"] == 0:
            return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
