#!/usr/bin/env bash
# The regression-suite walkthrough of docs/regression-suites.md, in a scratch git repository:
# prints each command and its output. Usage: STOIK=target/release/stoik tests/suite_walkthrough.sh
set -u
STOIK=$(realpath "${STOIK:?set STOIK to the stoik binary}")
REPO=$(cd "$(dirname "$0")/.." && pwd)
W=$(mktemp -d)/h2-work
mkdir -p $W/mechanisms/thermo
cp $REPO/mechanisms/hydrogen-oxygen.toml $REPO/mechanisms/hydrogen-oxygen.scenario.toml $REPO/mechanisms/hydrogen-oxygen.suite.toml $W/mechanisms/
cp $REPO/mechanisms/thermo/janaf-nasa7.toml $W/mechanisms/thermo/
cd $W
export PATH=$(dirname $STOIK):$PATH
g() { git -c user.name=demo -c user.email=demo@example.invalid "$@"; }
g init -q && g add . && g commit -qm "hydrogen mechanism"
run() { echo "\$ $*"; "$@"; echo "[exit status $?]"; echo; }
run stoik suite record mechanisms/hydrogen-oxygen.suite.toml
g add . && g commit -qm "baseline"
run stoik suite verify mechanisms/hydrogen-oxygen.suite.toml
sed -i 's/prefactor = 3.547e15/prefactor = 7.094e15/' mechanisms/hydrogen-oxygen.toml
sed -i 's/equation = "H2 + OH <=> H2O + H"/equation = "OH + H2 <=> H + H2O"/' mechanisms/hydrogen-oxygen.toml
sed -i "s/prefactor = 2.97e6,/prefactor = 4.0e6,/" mechanisms/hydrogen-oxygen.toml
echo '$ git diff --stat'; g diff --stat; echo
run stoik diff HEAD:mechanisms/hydrogen-oxygen.toml mechanisms/hydrogen-oxygen.toml
run stoik suite verify mechanisms/hydrogen-oxygen.suite.toml --explain --junit suite.xml --markdown suite.md
echo '$ cat suite.md'; cat suite.md
