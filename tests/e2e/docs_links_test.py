#!/usr/bin/env python3
"""Every relative link in README.md, DEVELOPERS.md and docs/*.md names a file that exists and, when
it has a `#fragment`, a heading of that file.

Anchors are made from headings as GitHub makes them: lower case, everything but letters, digits,
spaces, hyphens and underscores removed, each space turned into a hyphen, and `-1`, `-2`, ...
added to a repeated one. Headings inside fenced code blocks are not headings. The programs are not
run: --bin-dir is accepted for ctest's sake and not used.
"""
import argparse
import glob
import os
import re
import sys

LINK = re.compile(r"!?\[([^\]]*)\]\(([^)\s]+)\)")


def without_code(text):
    """The text with fenced code blocks and inline code blanked, line count kept."""
    out, fence = [], False
    for line in text.split("\n"):
        if line.lstrip().startswith("```"):
            fence = not fence
            out.append("")
        elif fence:
            out.append("")
        else:
            out.append(re.sub(r"`[^`\n]*`", "``", line))
    return "\n".join(out)


def anchors(text):
    found, seen, fence = set(), {}, False
    for line in text.split("\n"):
        if line.lstrip().startswith("```"):
            fence = not fence
            continue
        m = None if fence else re.match(r"#{1,6} +(.*?)#*\s*$", line)
        if not m:
            continue
        slug = re.sub(r"[^\w\- ]", "", m.group(1).strip().lower()).replace(" ", "-")
        n = seen.get(slug, 0)
        seen[slug] = n + 1
        found.add(slug if n == 0 else f"{slug}-{n}")
    return found


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--bin-dir", required=True)
    parser.add_argument("--source-dir", required=True)
    args = parser.parse_args()
    root = os.path.abspath(args.source_dir)
    pages = [os.path.join(root, "README.md"), os.path.join(root, "DEVELOPERS.md")]
    pages += sorted(glob.glob(os.path.join(root, "docs", "*.md")))
    failures, checked = [], 0
    texts = {}

    def read(path):
        if path not in texts:
            with open(path, encoding="utf-8") as f:
                texts[path] = f.read()
        return texts[path]

    for page in pages:
        if not os.path.exists(page):
            continue
        text = without_code(read(page))
        for m in LINK.finditer(text):
            target = m.group(2)
            if re.match(r"[a-z]+:", target):  # http:, https:, mailto: are not checked here
                continue
            checked += 1
            line = text.count("\n", 0, m.start()) + 1
            where = f"{os.path.relpath(page, root)}:{line}: {target}"
            path, _, fragment = target.partition("#")
            dest = os.path.normpath(os.path.join(os.path.dirname(page), path)) if path else page
            if not os.path.exists(dest):
                failures.append(f"{where}: no file {os.path.relpath(dest, root)}")
                continue
            if fragment and (not dest.endswith(".md") or fragment not in anchors(read(dest))):
                failures.append(f"{where}: no heading with the anchor #{fragment}")
    for failure in failures:
        print("FAIL", failure)
    print(f"{checked - len(failures)} passed, {len(failures)} failed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
