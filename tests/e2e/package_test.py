#!/usr/bin/env python3
"""The Debian package: built with cpack from the build directory, then looked at from outside with
dpkg-deb, its programs run, its configuration loaded, its manual pages rendered and its bash
completion run.

Expected values come from the built programs themselves (their version, their subcommands and
options as `--help` lists them), from the libraries they link (ldd, dpkg -S), from config/demo.yaml,
and from the conventions named beside each check. Nothing here installs the package or touches
the machine's users or systemd: the maintainer scripts are only read.
"""
import argparse
import os
import re
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import time

import daemon_support as ds

try:
    import yaml  # python3-yaml: reads demo.yaml and the packaged configuration independently
except ImportError:
    yaml = None

SKIPPED = 77  # ctest's SKIP_RETURN_CODE for the script tests (tests/CMakeLists.txt)




def run(command, **kwargs):
    kwargs.setdefault("timeout", 120)
    return subprocess.run(command, capture_output=True, text=True, **kwargs)


# ---- what the built programs say about themselves ------------------------------------------------

def help_sections(text):
    """The lines of a CLI11 help text, grouped under their headings (OPTIONS, SUBCOMMANDS, ...)."""
    sections, heading = {}, None
    for line in text.splitlines():
        if line and not line.startswith(" ") and line.rstrip().endswith(":"):
            heading = line.strip().rstrip(":").upper()
            sections[heading] = []
        elif heading and line.startswith("  "):
            sections[heading].append(line.strip())
    return sections


def subcommands(stagewell):
    """The subcommands `stagewell --help` lists."""
    lines = help_sections(run([stagewell, "--help"]).stdout).get("SUBCOMMANDS", [])
    return [line.split()[0].rstrip(",") for line in lines if line]  # 'recompute, reprocess


def options(stagewell, command):
    """Every option name (-s, --site, ...) `stagewell COMMAND --help` lists."""
    names = []
    for line in help_sections(run([stagewell, command, "--help"]).stdout).get("OPTIONS", []):
        spec = re.split(r"\s{2,}", line)[0]  # '-s,--site TEXT REQUIRED' before the description
        names += re.findall(r"(?:^|,)(--?[A-Za-z][A-Za-z0-9-]*)", spec.split(" ")[0])
    return names


def package_of(library):
    """The Debian package that holds a shared library (dpkg -S), without its architecture."""
    result = run(["dpkg", "-S", os.path.realpath(library)])
    if result.returncode != 0:
        result = run(["dpkg", "-S", library])  # /lib vs /usr/lib on a merged-/usr system
    return result.stdout.split(":")[0] if result.returncode == 0 else None


def linked_packages(program):
    """The packages of the shared libraries a program links itself (its DT_NEEDED entries, read
    with readelf; ldd resolves them to files), the loader and vdso aside. Libraries those pull in
    (libpq's Kerberos and TLS) are their own packages' dependencies, as dpkg-shlibdeps(1) has it."""
    needed = set(re.findall(r"\(NEEDED\)\s+Shared library: \[([^\]]+)\]",
                            run(["readelf", "-d", program]).stdout))
    packages = set()
    for line in run(["ldd", program]).stdout.splitlines():
        match = re.search(r"^\s*(\S+) => (/\S+)", line)
        if match and match.group(1) in needed:
            match = re.search(r"=> (/\S+)", line)
            package = package_of(match.group(1))
            if package:
                packages.add(package)
    return packages


def names_of(package):
    """A package's own name and the virtual ones it Provides (dpkg-query): a shlibs file may name
    either in Depends (libspdlog1.10 is depended on as libspdlog1.10-fmt9)."""
    provides = run(["dpkg-query", "-W", "-f=${Provides}", package]).stdout
    return {package} | {re.split(r"[\s(]", item.strip())[0] for item in provides.split(",")
                        if item.strip()}


# ---- the completion, run as bash runs it -------------------------------------------------------

def complete(script, words, environment=None):
    """What the completion offers for a command line whose last word is being completed."""
    quoted = " ".join("'" + word.replace("'", "'\\''") + "'" for word in words)
    program = (f"source '{script}'\n"
               f"COMP_WORDS=({quoted}); COMP_CWORD={len(words) - 1}\n"
               "_stagewell\n"
               "printf '%s\\n' \"${COMPREPLY[@]}\"\n")
    result = run(["bash", "--norc", "--noprofile", "-c", program], env=environment)
    return [line for line in result.stdout.splitlines() if line]


def free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--bin-dir", required=True)
    parser.add_argument("--source-dir", required=True)
    args = parser.parse_args()
    build_dir = os.path.dirname(os.path.abspath(args.bin_dir))
    built_stagewell = os.path.join(os.path.abspath(args.bin_dir), "stagewell")
    built_stagewelld = os.path.join(os.path.abspath(args.bin_dir), "stagewelld")

    missing = [tool for tool in ("cpack", "dpkg-deb", "dpkg", "ldd", "readelf", "groff", "bash")
               if shutil.which(tool) is None]
    if yaml is None:
        missing.append("python3-yaml")
    if missing:
        print(f"SKIPPED: {', '.join(missing)} not installed (deploy/setup.sh --with-tests)")
        return SKIPPED

    checks = ds.Results()
    # The version the programs carry (the project's, compiled in).
    version = run([built_stagewell, "--version"]).stdout.split()[-1]
    commands = subcommands(built_stagewell)
    checks.check("stagewell --help lists subcommands", len(commands) >= 5, repr(commands))

    with tempfile.TemporaryDirectory() as tmp:
        out = os.path.join(tmp, "out")
        made = run(["cpack", "-G", "DEB", "-B", out,
                    "--config", os.path.join(build_dir, "CPackConfig.cmake")], timeout=900)
        debs = [os.path.join(out, name) for name in os.listdir(out) if name.endswith(".deb")] \
            if os.path.isdir(out) else []
        if not checks.check("cpack made one .deb", made.returncode == 0 and len(debs) == 1,
                            made.stdout[-2000:] + made.stderr[-2000:]):
            return checks.finish()
        deb = debs[0]

        # -- the control fields --
        def field(name):
            return run(["dpkg-deb", "-f", deb, name]).stdout.strip()
        checks.check("Package", field("Package") == "stagewell", field("Package"))
        checks.check("Version is the programs' version", field("Version") == version,
                     f"{field('Version')} vs {version}")
        checks.check("Maintainer", field("Maintainer") == "stagewell developers", field("Maintainer"))
        # Depends names the package of every library the programs link (dpkg-shlibdeps, or the
        # list written for Debian 12 in deploy/package.cmake).
        depends = {re.split(r"[\s(]", item.strip())[0] for item in field("Depends").split(",")}
        for program in (built_stagewell, built_stagewelld):
            for package in sorted(linked_packages(program)):
                checks.check(f"Depends names {package}", bool(names_of(package) & depends),
                             field("Depends"))

        # -- the files --
        listing = run(["dpkg-deb", "-c", deb]).stdout.splitlines()
        files = {line.split()[-1].lstrip(".") for line in listing if line.startswith("-")}
        expected = {
            # FHS 3.0, /usr/bin and /usr/sbin: user commands in the one, system administration
            # programs (a daemon) in the other.
            "/usr/bin/stagewell", "/usr/sbin/stagewelld",
            # systemd.unit(5), "System Unit Search Path": /usr/lib/systemd/system for packages.
            "/usr/lib/systemd/system/stagewelld.service",
            # sysusers.d(5): /usr/lib/sysusers.d/*.conf.
            "/usr/lib/sysusers.d/stagewell.conf",
            # FHS 3.0, /usr/share/man, and man-pages(7): manN/NAME.N, the section in the name.
            "/usr/share/man/man1/stagewell.1", "/usr/share/man/man5/stagewell.yaml.5",
            "/usr/share/man/man8/stagewelld.8",
            # bash-completion's README: completions/<command> under share/bash-completion.
            "/usr/share/bash-completion/completions/stagewell",
            # Debian Policy 10.7.2: configuration files live in /etc.
            "/etc/stagewell/stagewell.yaml",
            # Debian Policy 12.6: examples in /usr/share/doc/<package>/examples.
            "/usr/share/doc/stagewell/examples/reference.yaml",
            "/usr/share/doc/stagewell/examples/demo.yaml",
        }
        for path in sorted(expected):
            checks.check(f"package holds {path}", path in files)
        # Debian Policy 9.1.2: a package installs nothing under /usr/local.
        checks.check("nothing under /usr/local", not any(f.startswith("/usr/local/") for f in files))

        # -- the control archive: conffiles and maintainer scripts --
        control = os.path.join(tmp, "control")
        run(["dpkg-deb", "-e", deb, control])
        conffiles_path = os.path.join(control, "conffiles")
        conffiles = open(conffiles_path).read().split() if os.path.exists(conffiles_path) else []
        checks.check("conffiles lists the configuration",
                     conffiles == ["/etc/stagewell/stagewell.yaml"], repr(conffiles))
        # deb-conffiles(5): each conffile is a file the package ships.
        for path in conffiles:
            checks.check(f"conffile {path} is in the package", path in files)
        scripts = {}
        for name in ("postinst", "prerm", "postrm"):
            path = os.path.join(control, name)
            exists = os.path.exists(path)
            checks.check(f"{name} is executable", exists and os.access(path, os.X_OK))
            scripts[name] = open(path).read() if exists else ""
            checks.check(f"{name} parses (sh -n)", exists and run(["sh", "-n", path]).returncode == 0)
        # The commands, without comment lines (which may well say what the administrator runs).
        postinst = "\n".join(line for line in scripts["postinst"].splitlines()
                             if not line.lstrip().startswith("#"))
        sysusers_call = re.search(r"^\s*systemd-sysusers\s+(\S+)", postinst, re.M)
        checks.check("postinst runs systemd-sysusers on the packaged file",
                     sysusers_call is not None and sysusers_call.group(1) in files, postinst)
        checks.check("postinst reloads systemd", "systemctl daemon-reload" in postinst)
        # The administrator writes a configuration before the service first starts (the brief of
        # this package); a later upgrade restarts only a running service (try-restart).
        checks.check("postinst neither enables nor starts",
                     not re.search(r"systemctl\s+(--\S+\s+)*(enable|start|restart|reenable)\b",
                                   postinst), postinst)
        checks.check("prerm stops the service on remove",
                     re.search(r"remove\).*systemctl stop stagewelld", scripts["prerm"], re.S)
                     is not None, scripts["prerm"])
        checks.check("postrm reloads systemd", "systemctl daemon-reload" in scripts["postrm"])

        # -- the extracted tree --
        root = os.path.join(tmp, "root")
        run(["dpkg-deb", "-x", deb, root])
        stagewell = root + "/usr/bin/stagewell"
        stagewelld = root + "/usr/sbin/stagewelld"
        got = run([stagewell, "--version"]).stdout.strip()
        checks.check("packaged stagewell --version", got == f"stagewell {version}", got)
        got = run([stagewelld, "--version"]).stdout.strip()
        checks.check("packaged stagewelld --version", got == f"stagewelld {version}", got)

        # The unit: filled in with the packaged paths; runs as the sysusers.d user.
        unit = open(root + "/usr/lib/systemd/system/stagewelld.service").read()
        settings = dict(re.findall(r"^(\w+)=(.*)$", unit, re.M))
        # configure_file's @VAR@ placeholders (SystemCallFilter=@system-service is systemd's own).
        checks.check("unit has no placeholder left", re.search(r"@[A-Z_]+@", unit) is None)
        exec_start = settings.get("ExecStart", "").split()
        checks.check("ExecStart runs the packaged stagewelld with the conffile",
                     exec_start[:1] == ["/usr/sbin/stagewelld"] and "/usr/sbin/stagewelld" in files
                     and exec_start[-1:] == conffiles[:1], repr(exec_start))
        sysusers = open(root + "/usr/lib/sysusers.d/stagewell.conf").read()
        user_line = re.search(r"^u\s+(\S+)\s+\S+\s+\"[^\"]*\"\s+(\S+)", sysusers, re.M)
        checks.check("sysusers.d declares a user with a home", user_line is not None, sysusers)
        if user_line:
            checks.check("unit's User= is the sysusers.d user",
                         settings.get("User") == user_line.group(1), settings.get("User"))
            # systemd.exec(5): StateDirectory=NAME is /var/lib/NAME.
            checks.check("the user's home is the unit's state directory",
                         user_line.group(2) == "/var/lib/" + settings.get("StateDirectory", ""))
        # systemd-sysusers itself, writing into a scratch root (--root), never this machine's
        # /etc: the file must create that user and its group.
        if shutil.which("systemd-sysusers") and user_line:
            sysroot = os.path.join(tmp, "sysroot")
            os.makedirs(os.path.join(sysroot, "etc"))
            made = run(["systemd-sysusers", f"--root={sysroot}",
                        root + "/usr/lib/sysusers.d/stagewell.conf"])
            passwd = open(os.path.join(sysroot, "etc", "passwd")).read() \
                if made.returncode == 0 else made.stderr
            group = open(os.path.join(sysroot, "etc", "group")).read() \
                if made.returncode == 0 else ""
            entry = next((line.split(":") for line in passwd.splitlines()
                          if line.startswith(user_line.group(1) + ":")), None)
            # passwd(5): name:password:UID:GID:GECOS:home:shell.
            checks.check("systemd-sysusers creates the user with that home",
                         entry is not None and entry[5] == user_line.group(2), passwd)
            checks.check("systemd-sysusers creates its group",
                         any(line.startswith(settings.get("Group", "?") + ":")
                             for line in group.splitlines()), group)
        checks.check("ConfigurationDirectory is the conffile's directory",
                     "/etc/" + settings.get("ConfigurationDirectory", "")
                     == os.path.dirname(conffiles[0]) if conffiles else False)
        # daemon/stagewelld/service.hpp: exit status 3 is a damaged database.
        checks.check("no restart after a damaged database",
                     settings.get("RestartPreventExitStatus") == "3")

        # The configuration: everything it writes lies under the unit's state directory.
        config_path = root + "/etc/stagewell/stagewell.yaml"
        config_text = open(config_path).read()
        config = yaml.safe_load(config_text)
        state = "/var/lib/" + settings.get("StateDirectory", "")
        writes = [config["database"]] + [s["path"] for s in config.get("sources", [])]
        checks.check("the configuration writes only in the state directory",
                     all(path.startswith(state + "/") for path in writes), repr(writes))
        checks.check("no log file (the journal keeps stderr)", "file" not in config.get("log", {}))
        checks.check("one example site", len(config["sites"]) == 1)
        # A copy with the state directory moved here, and the HTTP page on a free port.
        port = free_port()
        state_copy = os.path.join(tmp, "state")
        copy = os.path.join(tmp, "stagewell.yaml")
        with open(copy, "w") as f:
            f.write(config_text.replace(state, state_copy)
                    .replace(config["http"]["listen"], f"127.0.0.1:{port}"))
        result = run([stagewell, "check", "--config", copy])
        checks.check("packaged stagewell check accepts the configuration",
                     result.returncode == 0 and "valid; 1 site" in result.stdout,
                     result.stdout + result.stderr)
        # The packaged service starts on it, serves its page, and stops cleanly on SIGTERM.
        log_path = os.path.join(tmp, "stagewelld.log")
        with open(log_path, "w") as log:
            service = subprocess.Popen([stagewelld, "--config", copy], stderr=log)
        try:
            deadline, started = time.monotonic() + 30, False
            while time.monotonic() < deadline and service.poll() is None and not started:
                started = " started: " in open(log_path).read()
                time.sleep(0.1)
            checks.check("packaged stagewelld starts on the configuration", started,
                         open(log_path).read()[-2000:])
            if started:
                with socket.create_connection(("127.0.0.1", port), timeout=10) as s:
                    s.sendall(b"GET / HTTP/1.1\r\nHost: x\r\nConnection: close\r\n\r\n")
                    status = s.recv(64).decode(errors="replace")
                checks.check("its page answers", status.startswith("HTTP/1.1 200"), status)
                checks.check("it made the drop folder",
                             os.path.isdir(os.path.join(state_copy, "incoming")))
            service.send_signal(signal.SIGTERM)
            checks.check("it stops with status 0 on SIGTERM", service.wait(timeout=30) == 0)
        finally:
            if service.poll() is None:
                service.kill()
                service.wait()

        # -- the manual pages --
        for section, name in (("1", "stagewell"), ("5", "stagewell.yaml"), ("8", "stagewelld")):
            page = f"{root}/usr/share/man/man{section}/{name}.{section}"
            rendered = run(["groff", "-man", "-Tutf8", "-ww", page])
            checks.check(f"{name}({section}) renders without groff warnings",
                         rendered.returncode == 0 and rendered.stderr == "", rendered.stderr)
            # man-pages(7), "Title line": .TH name section date source, the source naming the
            # package and its version.
            title = re.search(r"^\.TH\s+(\S+)\s+(\S+)\s+\S+\s+\"([^\"]*)\"", open(page).read(), re.M)
            checks.check(f"{name}({section}) title line", title is not None and
                         title.group(1) == name.upper() and title.group(2) == section and
                         title.group(3) == f"stagewell {version}",
                         title.group(0) if title else "no .TH")
            text = rendered.stdout
            # The caution every page that computes discharge carries (README, "Cautions").
            checks.check(f"{name}({section}) carries the caution",
                         "estimate" in text and "licensed engineer" in text)
        page_text = run(["groff", "-man", "-Tutf8", "-P-cbou",
                         root + "/usr/share/man/man1/stagewell.1"]).stdout
        page_text = page_text.replace("\u2010", "-").replace("\u2212", "-")
        for command in commands:
            checks.check(f"stagewell(1) describes {command}",
                         re.search(rf"^\s+{re.escape(command)}\b", page_text, re.M) is not None)
            for option in options(built_stagewell, command):
                checks.check(f"stagewell(1) names {command} {option}",
                             re.search(rf"(?<![\w-]){re.escape(option)}(?![\w-])", page_text)
                             is not None)
        daemon_page = run(["groff", "-man", "-Tutf8", "-P-cbou",
                           root + "/usr/share/man/man8/stagewelld.8"]).stdout.replace("\u2010", "-")
        for option in ("--config", "--log-level", "--version", "SIGHUP", "SIGTERM"):
            checks.check(f"stagewelld(8) names {option}", option in daemon_page)

        # -- the completion --
        script = root + "/usr/share/bash-completion/completions/stagewell"
        checks.check("completion parses (bash -n)", run(["bash", "-n", script]).returncode == 0)
        offered = complete(script, ["stagewell", ""])
        checks.check("completion offers every subcommand", set(commands) <= set(offered),
                     f"{offered} vs {commands}")
        for command in commands:
            offered = complete(script, ["stagewell", command, "-"])
            wanted = options(built_stagewell, command)
            checks.check(f"completion offers {command}'s options", set(wanted) <= set(offered),
                         f"missing {sorted(set(wanted) - set(offered))}")
        demo = os.path.join(args.source_dir, "config", "demo.yaml")
        demo_ids = [site["id"] for site in yaml.safe_load(open(demo))["sites"]]
        offered = complete(script, ["stagewell", "daily", "--config", demo, "--site", ""])
        checks.check("completion offers the demo's site ids after --site", offered == demo_ids,
                     f"{offered} vs {demo_ids}")
        prefix = demo_ids[0][:2]
        offered = complete(script, ["stagewell", "flow", "-c", demo, "-s", prefix])
        checks.check("completion narrows site ids by prefix",
                     offered == [i for i in demo_ids if i.startswith(prefix)], repr(offered))
        environment = dict(os.environ, STAGEWELL_CONFIG=copy)
        offered = complete(script, ["stagewell", "flow", "--site", ""], environment)
        checks.check("without --config, site ids come from $STAGEWELL_CONFIG",
                     offered == [site["id"] for site in config["sites"]], repr(offered))

    return checks.finish()


if __name__ == "__main__":
    sys.exit(main())
