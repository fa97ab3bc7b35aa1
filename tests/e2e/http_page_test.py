#!/usr/bin/env python3
"""The status page in a real browser: headless Chromium (Debian's `chromium`) loads `/` from a
daemon on the demo configuration (config/demo.yaml, and its invented history made by
deploy/make_demo_data.py to end a minute ago, as deploy/demo.sh makes it, so that the page has
live figures), lets the page's script fetch the API, and dumps the resulting DOM. The numbers
shown must match the database read directly, within the rounding the page shows; every number has
its unit; the state is written in words; the caution is shown. Saves a screenshot to
build/test-artefacts/."""
import datetime
import glob
import html.parser
import os
import re
import shutil
import subprocess
import tempfile
import zoneinfo

import daemon_support as ds
import demo_support as demo
import http_support as hs

R = ds.Results()
CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
BROWSER_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                 "--disable-background-networking", "--hide-scrollbars"]


class Fields(html.parser.HTMLParser):
    """{site id: {field: (text, data-value)}} and {site id: {field: unit text}} from the DOM."""

    def __init__(self):
        super().__init__()
        self.sites, self.units, self.paths = {}, {}, {}
        self.site, self.open = None, None
        self.footer, self.in_footer = "", False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "section" and "data-site" in a:
            self.site = a["data-site"]
            self.sites[self.site], self.units[self.site], self.paths[self.site] = {}, {}, 0
            self.sites[self.site]["@state"] = (a.get("data-state"), None)
        if self.site and "data-field" in a:
            self.open = ("field", a["data-field"], a.get("data-value"), [])
        elif self.site and "data-unit" in a:
            self.open = ("unit", a["data-unit"], None, [])
        if tag == "path" and self.site and "flow" in a.get("class", ""):
            self.paths[self.site] += 1
        if tag == "footer":
            self.in_footer = True

    def handle_data(self, data):
        if self.open:
            self.open[3].append(data)
        if self.in_footer:
            self.footer += data

    def handle_endtag(self, tag):
        if self.open and tag in ("span", "div", "dd"):
            kind, name, value, text = self.open
            if kind == "field":
                self.sites[self.site][name] = ("".join(text), value)
            else:
                self.units[self.site][name] = "".join(text)
            self.open = None
        if tag == "footer":
            self.in_footer = False


def shown_close(label, text, want, unit=""):
    """The number shown (with thousands separators; in millions when its unit says so) equals
    `want` to the last significant digit shown (in a whole number, trailing zeros are not
    significant: 12,300 is to the hundred)."""
    if want is None:
        return R.check(label, text == "—", f"shown {text!r}, want none")
    match = re.fullmatch(r"-?[\d,]+(\.(\d+))?", text or "")
    if not R.check(label + " (a number)", match is not None, text):
        return False
    digits = text.replace(",", "").lstrip("-")
    step = 10.0 ** -len(match.group(2)) if match.group(2) else \
        10.0 ** (len(digits) - len(digits.rstrip("0"))) if digits.strip("0") else 1.0
    scale = 1e6 if unit.startswith("million") else 1.0
    shown = float(text.replace(",", "")) * scale
    return R.check(label, abs(shown - want) <= 0.5 * step * scale + 1e-12,
                   f"shown {text} {unit}, database {want}")


def prepare_demo(source_dir, tmp, port):
    """The demo configuration with its paths in `tmp` and http on `port`; its history, ending a
    minute ago, in the drop folder. Returns (config path, {site: readings in the history})."""
    with open(os.path.join(source_dir, "config", "demo.yaml")) as f:
        text = f.read()
    R.check("demo.yaml turns the status page on", "http:" in text and "127.0.0.1:8207" in text)
    text = text.replace("127.0.0.1:8207", f"127.0.0.1:{port}").replace("../var/demo/", tmp + "/")
    config = os.path.join(tmp, "demo.yaml")
    ds.write(config, text)
    os.makedirs(os.path.join(tmp, "incoming"), exist_ok=True)
    os.makedirs(os.path.join(tmp, "logger"), exist_ok=True)
    # A minute ago: well within every site's max_gap.
    end = datetime.datetime.now(datetime.timezone.utc).replace(microsecond=0) - \
        datetime.timedelta(minutes=1)
    history = os.path.join(tmp, "history")
    made = demo.make_history(source_dir, end.isoformat(), history)
    R.check("make_demo_data.py history ran", made.returncode == 0, made.stderr[-1000:])
    counts = {}
    for name in sorted(os.listdir(history)):
        site = name.removesuffix(".csv")
        counts[site] = len(demo.parsed(demo.rows_of(os.path.join(history, name)), site))
        with open(os.path.join(history, name)) as f:
            ds.drop_file(os.path.join(tmp, "incoming"), name, f.read())
    return config, counts


def run_browser(url, extra):
    return subprocess.run([CHROMIUM, *BROWSER_FLAGS, "--virtual-time-budget=8000", *extra, url],
                          capture_output=True, timeout=120)


def main():
    args = ds.parse_args()
    stagewelld, _ = ds.programs(args)
    artefacts = os.path.join(os.path.dirname(os.path.abspath(args.bin_dir)), "test-artefacts")
    os.makedirs(artefacts, exist_ok=True)
    if not R.check("chromium is installed (deploy/setup.sh --with-tests)", os.path.exists(CHROMIUM)):
        ds.exit_with(R)
    with tempfile.TemporaryDirectory() as tmp:
        port = hs.free_port()
        config, sites_read = prepare_demo(os.path.abspath(args.source_dir), tmp, port)
        db = os.path.join(tmp, "stagewell.db")
        with ds.Daemon(stagewelld, config, os.path.join(tmp, "daemon.log")).start() as daemon:
            R.check("http port opens", hs.wait_for_port(port))
            # The history is in once every file has left the drop folder (moved to done/).
            R.check("demo history read", ds.wait_until(
                lambda: not glob.glob(os.path.join(tmp, "incoming", "*.csv")), 120))
            R.check("every history reading stored", ds.wait_until(
                lambda: ds.count(db, "SELECT count(*) FROM discharge") ==
                sum(sites_read.values()), 60),
                (sites_read, ds.count(db, "SELECT count(*) FROM discharge")))
            url = f"http://127.0.0.1:{port}/"
            dom = run_browser(url, ["--dump-dom"])
            R.check("chromium ran", dom.returncode == 0, dom.stderr.decode()[-1000:])
            parser = Fields()
            parser.feed(dom.stdout.decode())
            today = datetime.datetime.now(zoneinfo.ZoneInfo("America/Denver")).date().isoformat()
            R.check("every demo site shown", sorted(parser.sites) == sorted(sites_read),
                    sorted(parser.sites))
            for site in sorted(sites_read):
                shown = parser.sites.get(site, {})
                units = parser.units.get(site, {})
                row = ds.query(db, "SELECT stage, discharge, flags FROM discharge WHERE site = ? "
                                   "ORDER BY unix_time DESC LIMIT 1", (site,))[0]
                day = ds.query(db, "SELECT volume FROM daily WHERE site = ? AND day = ?",
                               (site, today))
                shown_close(f"{site}: stage shown", shown.get("stage", ("", None))[0], row[0])
                shown_close(f"{site}: discharge shown", shown.get("discharge", ("", None))[0],
                            row[1])
                shown_close(f"{site}: today's volume shown", shown.get("volume", ("", None))[0],
                            day[0][0] if day else None, units.get("volume", ""))
                R.check(f"{site}: units shown", units.get("discharge") == "m³/s" and
                        units.get("volume", "").endswith("m³") and
                        units.get("stage") in ("m", "cm", "mm"),
                        units)
                flags = shown.get("flags", ("", None))[0]
                R.check(f"{site}: flags shown = database",
                        ("none" in flags) if not row[2] else all(
                            f in flags for f in row[2].split(",")), (flags, row[2]))
                R.check(f"{site}: state in words", "REPORTING" in shown.get("state", ("",))[0],
                        shown.get("state"))
                R.check(f"{site}: alarms in words", shown.get("alarms", ("",))[0] != "")
                R.check(f"{site}: a 24-hour hydrograph drawn", parser.paths.get(site) == 1)
                # The band: its half-width in percent to two significant figures, as the database
                # has it (discharge_high / discharge - 1).
                q, high, jones = ds.query(
                    db, "SELECT discharge, discharge_high, discharge_jones FROM discharge "
                        "WHERE site = ? ORDER BY time_ms DESC LIMIT 1", (site,))[0]
                if q:
                    text = shown.get("band", ("", None))[0]
                    match = re.search(r"±\s*([0-9.,]+)\s*%", text)
                    want = 100.0 * (high / q - 1.0)
                    R.check(f"{site}: band shown (± %)", match is not None and
                            abs(float(match.group(1).replace(",", "")) - want) <= 0.05 * want,
                            (text, want))
                if jones is not None:
                    R.check(f"{site}: Jones estimate shown", "Jones" in
                            shown.get("jones", ("",))[0], shown.get("jones"))
            R.check("footer caution", "Manning's equation" in parser.footer and
                    "field measurements" in parser.footer and
                    "licensed engineer" in parser.footer, parser.footer)
            png = os.path.join(artefacts, "status-page.png")
            shot = run_browser(url, [f"--screenshot={png}", "--window-size=1500,1900"])
            R.check("screenshot saved", shot.returncode == 0 and os.path.getsize(png) > 10000,
                    shot.stderr.decode()[-500:])
            print(f"screenshot: {png}", flush=True)
            R.check("daemon stops cleanly", daemon.stop() == 0, daemon.log()[-2000:])
    ds.exit_with(R)


if __name__ == "__main__":
    main()
