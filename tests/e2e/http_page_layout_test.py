#!/usr/bin/env python3
"""The status page as people see it, in headless Chromium driven over WebDriver (Debian's
`chromium-driver`, spoken to with the W3C WebDriver protocol over plain HTTP: no client library),
on a phone (390 x 844 and 360 x 740, mobile emulation) and a desktop window (1280 x 1000).

A daemon runs seven invented sites fed through its drop folder, four of which open an alarm
(low_flow, stale, rising, high_flow) and one of which has gone quiet; the configuration lists the
alarmed ones last. The browser runs in another time zone (TZ=Asia/Tokyo) than the configuration
(America/Denver). Checked on every screen:

  - nothing wider than the screen (document.documentElement.scrollWidth <= clientWidth), and no
    number sticking out of its card;
  - sites with an open alarm first, then quiet ones, then the rest, each group in configuration
    order;
  - a short caution about the estimated flows on the first screen, outside the footer;
  - every alarm: its kind in words, its value and limit with units (compared with the API's
    numbers: the discharge, seconds without a reading as a duration, stage units per hour), and
    "since HH:MM (age)" in the configured zone (converted here with Python's zoneinfo);
  - every time in the configured zone, which is named: "Updated HH:MM:SS" is the Denver clock;
  - figures to sensible precision: stage in mm without decimals, in cm to 0.1, in m to 0.001;
    discharge to three significant figures.

Screenshots go to build/test-artefacts/ (printed at the end)."""
import base64
import datetime
import json
import os
import re
import shutil
import subprocess
import tempfile
import time
import urllib.error
import urllib.request
import zoneinfo

import daemon_support as ds
import http_support as hs

R = ds.Results()
CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
CHROMEDRIVER = shutil.which("chromedriver") or "/usr/bin/chromedriver"
BROWSER_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                 "--disable-background-networking"]
ZONE = "America/Denver"
BROWSER_ZONE = "Asia/Tokyo"  # never the same wall clock as Denver (15 or 16 hours apart)
MIN = 60_000

# Alarmed sites come last in the configuration, so that configuration order is the wrong order.
SITES = f"""timezone: {ZONE}
sites:
  - id: steady
    name: Steady channel at the lower weir, reporting every minute
    section: {{shape: rectangular, width: 2.0, height: 1.5}}
    roughness: 0.014
    slope: 0.001
    checks: {{max_gap: 20m, flatline: 0}}
  - id: hushed
    name: Hushed ditch (sensor quiet, no alarm set)
    section: {{shape: rectangular, width: 1.0, height: 1.0}}
    roughness: 0.015
    slope: 0.002
    checks: {{max_gap: 20m, flatline: 0}}
  - id: empty
    name: Empty culvert, nothing received yet
    section: {{shape: circular, diameter: 0.9}}
    roughness: 0.013
    slope: 0.002
  - id: gauge-mm
    name: Millimetre gauge on the mill leat
    section: {{shape: rectangular, width: 2.0, height: 1.5}}
    roughness: 0.014
    slope: 0.001
    stage: {{units: mm}}
    checks: {{max_gap: 20m, flatline: 0}}
    alarms:
      low_flow: {{below: 0.5, hold: 0s}}
  - id: stale-site
    name: Upper spring (logger silent)
    section: {{shape: rectangular, width: 1.0, height: 1.0}}
    roughness: 0.015
    slope: 0.002
    checks: {{max_gap: 20m, flatline: 0}}
    alarms:
      stale: {{after: 5m}}
  - id: rising-site
    name: Rising brook under the old bridge
    section: {{shape: rectangular, width: 3.0, height: 3.0}}
    roughness: 0.03
    slope: 0.001
    stage: {{units: cm}}
    checks: {{max_gap: 20m, flatline: 0}}
    alarms:
      rising: {{rate: 50, window: 1h}}
  - id: big-river
    name: Broad river at the county road crossing
    section: {{shape: rectangular, width: 250.0, height: 10.0}}
    roughness: 0.03
    slope: 0.0005
    checks: {{max_gap: 20m, flatline: 0}}
    alarms:
      high_flow: {{above: 1000}}
"""

# Words each alarm kind must be named by (and the code itself must not be what is shown).
KIND_WORDS = {"low_flow": "low flow", "high_flow": "high flow", "stale": "no readings",
              "rising": "stage rising"}
# The unit each alarm's value and limit must be shown in (docs/checks-and-alarms.md, "Alarms"):
# discharge for the flow alarms, the site's stage unit per hour for rising (this configuration
# is metric and the rising site's stage is in cm).
ALARM_SYMBOLS = {"low_flow": "m³/s", "high_flow": "m³/s", "rising": "cm/h"}
# Decimals a stage is shown with, by unit: about a millimetre, the resolution of a level sensor
# (common practice).
STAGE_DECIMALS = {"mm": 0, "cm": 1, "m": 3}


def series(end_ms, minutes, stage_of):
    return [(end_ms - (minutes - 1 - i) * MIN, stage_of(i)) for i in range(minutes)]


def feed(incoming, now_ms):
    """Drops one file per site. Returns {site: [(ms, stage)]}."""
    end = now_ms - now_ms % MIN - MIN  # whole minutes, the last a minute or so ago
    data = {
        "steady": series(end, 60, lambda i: 0.40 + 0.001 * (i % 5)),
        "hushed": series(end - 3 * 60 * MIN, 30, lambda i: 0.25),
        # 90 mm in a 2 m channel: about 0.077 m³/s, below 0.5 (Manning, daemon_support.manning).
        "gauge-mm": series(end, 30, lambda i: 90.0 + (i % 3)),
        "stale-site": series(end - 270 * MIN, 30, lambda i: 0.30),
        # 2 cm a minute: 120 cm/h, above the rate of 50 cm/h.
        "rising-site": series(end, 60, lambda i: 20.0 + 2.0 * i),
        # 4 m in a 250 m channel: about 1,840 m³/s, above 1,000.
        "big-river": series(end, 60, lambda i: 4.0),
    }
    for site, rows in data.items():
        ds.drop_file(incoming, f"{site}.csv", hs.csv_text(site, rows))
    return data


# ---- WebDriver (W3C WebDriver, https://www.w3.org/TR/webdriver2/) over plain HTTP -----------------

class Browser:
    def __init__(self, port, options):
        self.base = f"http://127.0.0.1:{port}"
        caps = {"capabilities": {"alwaysMatch": {"browserName": "chrome",
                                                 "goog:chromeOptions": options}}}
        self.session = self._call("POST", "/session", caps)["sessionId"]

    def _call(self, method, path, body=None):
        data = json.dumps(body).encode() if body is not None else None
        request = urllib.request.Request(self.base + path, data=data, method=method,
                                         headers={"Content-Type": "application/json"})
        try:
            with urllib.request.urlopen(request, timeout=120) as response:
                return json.loads(response.read())["value"]
        except urllib.error.HTTPError as e:
            raise RuntimeError(f"webdriver {path}: {e.read()[:500]!r}") from None

    def call(self, method, path, body=None):
        return self._call(method, f"/session/{self.session}{path}", body)

    def go(self, url):
        self.call("POST", "/url", {"url": url})

    def js(self, script, *args):
        return self.call("POST", "/execute/sync", {"script": script, "args": list(args)})

    def screenshot(self, path):
        with open(path, "wb") as f:
            f.write(base64.b64decode(self.call("GET", "/screenshot")))

    def full_screenshot(self, path):
        """The whole page (Chrome DevTools' Page.captureScreenshot beyond the viewport)."""
        shot = self.call("POST", "/goog/cdp/execute", {
            "cmd": "Page.captureScreenshot",
            "params": {"captureBeyondViewport": True, "fromSurface": True}})
        with open(path, "wb") as f:
            f.write(base64.b64decode(shot["data"]))

    def quit(self):
        try:
            self._call("DELETE", f"/session/{self.session}")
        except Exception:  # noqa: BLE001 - the driver is killed after anyway
            pass


# What the page shows, gathered in the browser in one go.
MEASURE = r"""
const doc = document.documentElement;
const rect = e => { const r = e.getBoundingClientRect();
                    return {left: r.left, right: r.right, top: r.top, bottom: r.bottom}; };
const cards = [...document.querySelectorAll("section.site")].map(s => ({
  id: s.dataset.site, state: s.dataset.state, rect: rect(s),
  numbers: [...s.querySelectorAll(".figure .number")].map(n => ({
      field: n.dataset.field, text: n.textContent, rect: rect(n),
      unit: (s.querySelector(`[data-unit="${n.dataset.field}"]`) || {}).textContent || ""})),
  alarms: [...s.querySelectorAll("li[data-kind]")].map(li => ({
      kind: li.dataset.kind, text: li.textContent})),
  alarmsText: (s.querySelector('[data-field="alarms"]') || {}).textContent || "",
}));
// Elements outside the footer that carry the caution, with their place on the screen.
const cautions = [...document.body.querySelectorAll("*")]
  .filter(e => !e.closest("footer") && !e.closest("script") && e.children.length === 0 &&
               /Manning/.test(e.textContent) && /field measurements/.test(e.textContent))
  .map(e => rect(e));
return {scrollWidth: doc.scrollWidth, clientWidth: doc.clientWidth,
        innerWidth: window.innerWidth, innerHeight: window.innerHeight,
        loaded: document.body.dataset.loaded || "", header: document.querySelector("header").innerText,
        cards, cautions};
"""


def shown_number(text):
    """The float of a number as shown ("1,840", "0.0771"), or None."""
    match = re.fullmatch(r"-?[\d,]+(\.\d+)?", text.strip())
    return float(text.replace(",", "")) if match else None


def significant_digits(text):
    """How many significant figures a shown number has; for a whole number, trailing zeros do
    not count (1,840 has three)."""
    digits = text.replace(",", "").replace("-", "")
    if "." in digits:
        return len(digits.replace(".", "").lstrip("0"))
    return len(digits.strip("0"))


def parse_duration(text):
    """Seconds of "4 h 30 min", "5 min", "2 d 3 h", "45 s"."""
    units = {"d": 86400, "h": 3600, "min": 60, "s": 1}
    parts = re.findall(r"(\d+) (d|h|min|s)\b", text)
    return sum(int(n) * units[u] for n, u in parts) if parts else None


def local_hhmm(ms, now_ms):
    """The time as the page should write it in ZONE: "14:05" today, else "1 Dec 14:05"."""
    tz = zoneinfo.ZoneInfo(ZONE)
    t = datetime.datetime.fromtimestamp(ms / 1000, tz)
    now = datetime.datetime.fromtimestamp(now_ms / 1000, tz)
    prefix = "" if t.date() == now.date() else f"{t.day} {t.strftime('%b')} "
    return prefix + t.strftime("%H:%M")


def ms_of(text):
    return round(datetime.datetime.fromisoformat(text.replace("Z", "+00:00")).timestamp() * 1000)


def expected_order(api_sites):
    """Alarmed, then quiet (latest older than max_gap), then the rest; configuration order in each."""
    def rank(site):
        if site["alarms"]:
            return 0
        if site["latest"] and site["latest"]["age_s"] > site["max_gap_s"]:
            return 1
        return 2
    return [s["id"] for s in sorted(api_sites, key=rank)]  # sorted() is stable


def check_alarm(label, alarm, item, db, site, now_ms):
    text = " ".join(item["text"].split())
    R.check(f"{label}: kind in words", KIND_WORDS[alarm["kind"]] in text.lower() and
            ("_" not in alarm["kind"] or alarm["kind"] not in text), text)
    raised = ms_of(alarm["raised"])
    since = re.search(r"since (.+?) \(([^)]*)\)", text)
    if R.check(f"{label}: 'since TIME (age)' shown", since is not None, text):
        R.check(f"{label}: since = raised in {ZONE}",
                since.group(1) == local_hhmm(raised, now_ms),
                f"{since.group(1)!r} vs {local_hhmm(raised, now_ms)!r} ({alarm['raised']})")
        shown_age = parse_duration(since.group(2))
        R.check(f"{label}: age = now - raised (to the minute, plus a refresh)",
                shown_age is not None and abs(shown_age - (now_ms - raised) / 1000) <= 90,
                f"{since.group(2)!r} vs {(now_ms - raised) / 1000:.0f} s")
    if alarm["kind"] == "stale":
        # Silent since the newest stored reading (the discharge view), by independent arithmetic.
        newest = ds.query(db, "SELECT max(unix_time) FROM discharge WHERE site = ?", (site,))[0][0]
        silent = re.search(r"((?:\d+ (?:d|h|min|s) ?)+)without a reading", text)
        if R.check(f"{label}: silence as a duration", silent is not None, text):
            got = parse_duration(silent.group(1))
            R.check(f"{label}: silence = now - newest reading (to the minute)",
                    got is not None and abs(got - (now_ms / 1000 - newest)) <= 90,
                    f"{silent.group(1)!r} vs {now_ms / 1000 - newest:.0f} s")
        limit = re.search(r"limit ((?:\d+ (?:d|h|min|s) ?)+)", text)
        R.check(f"{label}: limit as a duration = threshold",
                limit is not None and parse_duration(limit.group(1)) == alarm["threshold"], text)
        return
    symbol = ALARM_SYMBOLS[alarm["kind"]]
    number = r"(-?[\d,]+(?:\.\d+)?)"
    value = re.search(number + " " + re.escape(symbol), text)
    if R.check(f"{label}: value with its unit {symbol}", value is not None, text):
        got = shown_number(value.group(1))
        R.close(f"{label}: value = the API's (3 significant figures)", got, alarm["value"], 5e-3)
    limit = re.search(r"limit " + number + " " + re.escape(symbol), text)
    R.check(f"{label}: limit with its unit = threshold",
            limit is not None and shown_number(limit.group(1)) == alarm["threshold"], text)


def check_screen(name, browser, url, port, db, artefacts):
    browser.go(url)
    page = ds.wait_until(lambda: (lambda m: m if m["loaded"] == "yes" else None)(
        browser.js(MEASURE)), 30, 0.2)
    if not R.check(f"{name}: page loaded its figures", page is not None):
        return
    time.sleep(0.5)  # the clock's first tick
    page = browser.js(MEASURE)
    status, api = hs.get_json(port, "/api/sites")
    now_ms = ms_of(api["now"])
    sites = {s["id"]: s for s in api["sites"]}
    label = f"{name} ({page['innerWidth']}x{page['innerHeight']})"
    R.check(f"{label}: no sideways scrolling", page["scrollWidth"] <= page["clientWidth"],
            f"scrollWidth {page['scrollWidth']} > clientWidth {page['clientWidth']}")
    for card in page["cards"]:
        for n in card["numbers"]:
            R.check(f"{label}: {card['id']} {n['field']} inside its card",
                    n["rect"]["left"] >= card["rect"]["left"] and
                    n["rect"]["right"] <= card["rect"]["right"], (n, card["rect"]))
    if page["innerWidth"] < 600:
        R.check(f"{label}: one column of cards, each the width of the screen or less",
                len({round(c["rect"]["left"]) for c in page["cards"]}) == 1 and
                all(c["rect"]["right"] <= page["clientWidth"] for c in page["cards"]),
                [c["rect"] for c in page["cards"]])
    order = [c["id"] for c in page["cards"]]
    R.check(f"{label}: alarmed sites first, then quiet, then the rest",
            order == expected_order(api["sites"]), f"{order} vs {expected_order(api['sites'])}")
    R.check(f"{label}: caution on the first screen",
            any(r["top"] >= 0 and r["bottom"] <= page["innerHeight"] for r in page["cautions"]),
            page["cautions"])
    # Times: the zone named, and "Updated" on the configured zone's clock.
    header = page["header"]
    R.check(f"{label}: the zone named in the header", ZONE in header, header)
    updated = re.search(r"Updated (\d\d):(\d\d):(\d\d)", header)
    if R.check(f"{label}: 'Updated HH:MM:SS' shown", updated is not None, header):
        local = datetime.datetime.now(zoneinfo.ZoneInfo(ZONE))
        shown_s = int(updated.group(1)) * 3600 + int(updated.group(2)) * 60 + int(updated.group(3))
        now_s = local.hour * 3600 + local.minute * 60 + local.second
        gap = min(abs(shown_s - now_s), 86400 - abs(shown_s - now_s))
        R.check(f"{label}: 'Updated' is {ZONE} time (browser in {BROWSER_ZONE})", gap <= 30,
                f"{updated.group(0)} vs {local:%H:%M:%S}")
    for card in page["cards"]:
        site = sites[card["id"]]
        alarms = {a["kind"]: a for a in site["alarms"]}
        items = {a["kind"]: a for a in card["alarms"]}
        R.check(f"{label}: {card['id']} every open alarm listed", sorted(items) == sorted(alarms),
                (card["alarmsText"], sorted(alarms)))
        for kind, alarm in alarms.items():
            if kind in items:
                check_alarm(f"{label}: {card['id']} {kind}", alarm, items[kind], db, card["id"],
                            now_ms)
        numbers = {n["field"]: n for n in card["numbers"]}
        if site["latest"] and "stage" in numbers:
            text = numbers["stage"]["text"]
            digits = STAGE_DECIMALS[site["stage_unit"]]
            decimals = len(text.split(".")[1]) if "." in text else 0
            R.check(f"{label}: {card['id']} stage in {site['stage_unit']} to {digits} decimals "
                    "(common practice)", decimals == digits and
                    abs(shown_number(text) - site["latest"]["stage"]) <= 0.5 * 10 ** -digits,
                    (text, site["latest"]["stage"]))
        if site["latest"] and site["latest"]["discharge"] and "discharge" in numbers:
            text = numbers["discharge"]["text"]
            want = site["latest"]["discharge"]
            R.check(f"{label}: {card['id']} discharge to 3 significant figures",
                    significant_digits(text) <= 3 and
                    abs(shown_number(text) - want) <= 0.005 * want, (text, want))
        if site["today"]["volume"] and "volume" in numbers:
            n = numbers["volume"]
            scale = 1e6 if n["unit"].startswith("million") else 1
            got = shown_number(n["text"])
            R.check(f"{label}: {card['id']} today's volume to 3 significant figures, with unit",
                    got is not None and significant_digits(n["text"]) <= 3 and
                    abs(got * scale - site["today"]["volume"]) <= 0.005 * site["today"]["volume"]
                    and "m³" in n["unit"], (n["text"], n["unit"], site["today"]["volume"]))
    first = os.path.join(artefacts, f"status-page-{name}.png")
    whole = os.path.join(artefacts, f"status-page-{name}-full.png")
    browser.screenshot(first)
    browser.full_screenshot(whole)
    R.check(f"{label}: screenshots saved", os.path.getsize(first) > 5000 and
            os.path.getsize(whole) > 5000)
    print(f"screenshots: {first} {whole}", flush=True)


def main():
    args = ds.parse_args()
    stagewelld, _ = ds.programs(args)
    artefacts = os.path.join(os.path.dirname(os.path.abspath(args.bin_dir)), "test-artefacts")
    os.makedirs(artefacts, exist_ok=True)
    if not R.check("chromium and chromedriver are installed (deploy/setup.sh --with-tests)",
                   os.path.exists(CHROMIUM) and os.path.exists(CHROMEDRIVER)):
        ds.exit_with(R)
    with tempfile.TemporaryDirectory() as tmp:
        port = hs.free_port()
        config = hs.write_config(tmp, port)
        with open(config) as f:
            text = f.read()
        # The test's own sites instead of http_support's.
        text = text.replace("timezone: America/Denver\n", "")
        text = text[:text.index("sites:\n")] + SITES
        ds.write(config, text)
        db = os.path.join(tmp, "db", "stagewell.db")
        with ds.Daemon(stagewelld, config, os.path.join(tmp, "daemon.log")).start() as daemon:
            R.check("http port opens", hs.wait_for_port(port))
            data = feed(os.path.join(tmp, "incoming"), int(time.time() * 1000))
            total = sum(len(rows) for rows in data.values())
            R.check("readings stored", ds.wait_until(
                lambda: ds.count(db, "SELECT count(*) FROM discharge") == total, 120),
                ds.count(db, "SELECT count(*) FROM discharge"))
            # stale is raised by the clock (every 10 s); the others by the readings.
            want = {"gauge-mm": "low_flow", "stale-site": "stale", "rising-site": "rising",
                    "big-river": "high_flow"}

            def alarms_open():
                status, api = hs.get_json(port, "/api/sites")
                got = {s["id"]: [a["kind"] for a in s["alarms"]] for s in api["sites"]}
                return all(got.get(site) == [kind] for site, kind in want.items()) and got
            R.check("the four alarms are open (test set-up)", ds.wait_until(alarms_open, 120),
                    hs.get_json(port, "/api/sites")[1])
            # The API names each alarm's unit as a UCUM code (docs/http-api.md): the discharge,
            # seconds, and the site's stage unit per hour.
            units = {s["id"]: [a.get("unit") for a in s["alarms"]]
                     for s in hs.get_json(port, "/api/sites")[1]["sites"] if s["alarms"]}
            R.check("api: each alarm's unit", units == {
                "gauge-mm": ["m3/s"], "stale-site": ["s"], "rising-site": ["cm/h"],
                "big-river": ["m3/s"]}, units)
            driver_port = hs.free_port()
            driver_log = open(os.path.join(tmp, "chromedriver.log"), "wb")
            driver = subprocess.Popen([CHROMEDRIVER, f"--port={driver_port}"],
                                      stdout=driver_log, stderr=driver_log,
                                      env=dict(os.environ, TZ=BROWSER_ZONE))
            try:
                R.check("chromedriver listens", hs.wait_for_port(driver_port))
                url = f"http://127.0.0.1:{port}/"
                screens = [
                    ("phone-390", {"mobileEmulation": {"deviceMetrics": {
                        "width": 390, "height": 844, "pixelRatio": 2.0, "touch": True}}}),
                    ("phone-360", {"mobileEmulation": {"deviceMetrics": {
                        "width": 360, "height": 740, "pixelRatio": 2.0, "touch": True}}}),
                    ("desktop-1280", {"args_extra": ["--window-size=1280,1000"]}),
                ]
                for name, extra in screens:
                    options = {"binary": CHROMIUM,
                               "args": BROWSER_FLAGS + extra.pop("args_extra", [])}
                    options.update(extra)
                    browser = Browser(driver_port, options)
                    try:
                        check_screen(name, browser, url, port, db, artefacts)
                    finally:
                        browser.quit()
            finally:
                driver.terminate()
                driver.wait(timeout=20)
                driver_log.close()
            R.check("daemon stops cleanly", daemon.stop() == 0, daemon.log()[-2000:])
    ds.exit_with(R)


if __name__ == "__main__":
    main()
