#!/usr/bin/env python3
"""Every unit code stagewell writes in machine-readable output is a valid UCUM code of the right
size, as judged by an outside implementation: the UCUM reference library @lhncbc/ucum-lhc (the
U.S. National Library of Medicine's, from the npm registry; installed into tests/tools/ucum by
deploy/setup.sh --with-tests).

`stagewell units --json` lists each unit with its UCUM code and its size in SI units (m, m3/s, m3);
the library must call each code valid and convert one of it to the same SI value (to 1e-12).
"""
import json
import os
import shutil
import subprocess

import daemon_support as ds

R = ds.Results()


def main():
    args = ds.parse_args()
    _, cli = ds.programs(args)
    tool = os.path.join(args.source_dir, "tests", "tools", "ucum")
    if not os.path.isdir(os.path.join(tool, "node_modules", "@lhncbc", "ucum-lhc")):
        print(f"the UCUM reference library is not installed in {tool}: "
              "run deploy/setup.sh --with-tests")
        return 1
    node = shutil.which("node") or shutil.which("nodejs")
    if node is None:
        print("Node.js is not installed: run deploy/setup.sh --with-tests")
        return 1

    listed = json.loads(subprocess.run([cli, "units", "--json"], check=True, capture_output=True,
                                       text=True).stdout)
    R.check("units: lengths, flows and volumes listed",
            {u["kind"] for u in listed} == {"length", "flow", "volume"}, str(listed))
    checked = json.loads(subprocess.run(
        [node, os.path.join(tool, "check_codes.js")], input=json.dumps(listed), check=True,
        capture_output=True, text=True, cwd=tool).stdout)
    for unit, verdict in zip(listed, checked):
        label = f"{unit['kind']} {unit['name']} as {unit['ucum']}"
        R.check(f"{label}: valid UCUM", verdict["valid"], verdict["message"])
        R.close(f"{label}: one of it in {unit['si_unit']}", verdict["si_value"],
                unit["si_factor"], rel_tol=1e-12)
    # The codes the store's views carry for each system (docs/database.md) are among them.
    codes = {u["ucum"] for u in listed}
    for code in ("m", "cm", "mm", "[ft_i]", "[in_i]", "m3/s", "[ft_i]3/s", "m3", "[ft_i]3"):
        R.check(f"{code} listed", code in codes)
    # The text listing names every code too, for people.
    text = subprocess.run([cli, "units"], check=True, capture_output=True, text=True).stdout
    R.check("text listing shows every UCUM code", all(u["ucum"] in text for u in listed), text)
    return R.finish()


if __name__ == "__main__":
    raise SystemExit(main())
