#!/usr/bin/env python3
"""`stagewell` without --config finds its configuration as documented (docs/configuration.md,
"Where the configuration is found"): $STAGEWELL_CONFIG when set (a missing file is an error, not
a reason to look elsewhere), else $XDG_CONFIG_HOME/stagewell/config.yaml ($HOME/.config by the
XDG Base Directory Specification), else /etc/stagewell/stagewell.yaml; with none, exit 1 and the
places looked at. The service's default is the system file (its --help shows it).
"""
import os
import subprocess
import tempfile

import daemon_support as ds

R = ds.Results()


def config(site):
    return f"""units: metric
database: db/stagewell.db
sites:
  - id: {site}
    section: {{shape: rectangular, width: 2.0, height: 1.5}}
    roughness: 0.014
    slope: 0.001
"""


def check(stagewell, env):
    full = {k: v for k, v in os.environ.items()
            if k not in ("STAGEWELL_CONFIG", "XDG_CONFIG_HOME", "HOME")}
    full.update(env)
    return subprocess.run([stagewell, "check"], capture_output=True, text=True, env=full,
                          timeout=30, cwd="/")


def main():
    args = ds.parse_args()
    stagewelld, stagewell = ds.programs(args)
    system_present = os.path.exists("/etc/stagewell/stagewell.yaml")
    with tempfile.TemporaryDirectory() as root:
        home = os.path.join(root, "home")
        xdg = os.path.join(root, "xdg")
        ds.write(os.path.join(home, ".config", "stagewell", "config.yaml"), config("from-home"))
        ds.write(os.path.join(xdg, "stagewell", "config.yaml"), config("from-xdg"))
        named = os.path.join(root, "named.yaml")
        ds.write(named, config("from-variable"))

        run = check(stagewell, {"STAGEWELL_CONFIG": named, "XDG_CONFIG_HOME": xdg, "HOME": home})
        R.check("STAGEWELL_CONFIG first", run.returncode == 0 and "from-variable" in run.stdout,
                run.stdout + run.stderr)
        run = check(stagewell, {"XDG_CONFIG_HOME": xdg, "HOME": home})
        R.check("then XDG_CONFIG_HOME", run.returncode == 0 and "from-xdg" in run.stdout,
                run.stdout + run.stderr)
        run = check(stagewell, {"HOME": home})
        R.check("then $HOME/.config", run.returncode == 0 and "from-home" in run.stdout,
                run.stdout + run.stderr)
        missing = os.path.join(root, "nowhere.yaml")
        run = check(stagewell, {"STAGEWELL_CONFIG": missing, "HOME": home})
        R.check("a STAGEWELL_CONFIG naming no file: exit 1, named",
                run.returncode == 1 and missing in run.stderr, run.stdout + run.stderr)
        if not system_present:
            run = check(stagewell, {"HOME": os.path.join(root, "empty-home")})
            R.check("nothing found: exit 1 with the places looked at", run.returncode == 1
                    and "/etc/stagewell/stagewell.yaml" in run.stderr
                    and "empty-home/.config/stagewell/config.yaml" in run.stderr,
                    run.stdout + run.stderr)
        given = subprocess.run([stagewell, "check", "--config", named], capture_output=True,
                               text=True, env={"STAGEWELL_CONFIG": missing}, timeout=30)
        R.check("--config wins over everything", given.returncode == 0
                and "from-variable" in given.stdout, given.stdout + given.stderr)
        helped = subprocess.run([stagewelld, "--help"], capture_output=True, text=True, timeout=30)
        R.check("the service's default is the system file",
                "/etc/stagewell/stagewell.yaml" in helped.stdout, helped.stdout)
    return R.finish()


if __name__ == "__main__":
    raise SystemExit(main())
