#!/usr/bin/python3
"""One browser test of a report: make it with lopside, then open it in headless Chromium.

    report_case.py OUTDIR NAME -- LOPSIDE ARGS... -- CHECK_ARGS...

In ARGS and CHECK_ARGS, @HTML@, @JSON@ and @OUT@ stand for OUTDIR/NAME.html, OUTDIR/NAME.json
and OUTDIR. lopside's exit status 0, and 4 (a lot with a unit not passed), count as made; the
checker (check_report.py beside this file) then runs with CHECK_ARGS and a screenshot, and its
exit status is this script's.
"""
import os
import subprocess
import sys


def main(argv):
    if len(argv) < 4 or argv[2] != "--" or "--" not in argv[3:]:
        print(__doc__, file=sys.stderr)
        return 2
    out, name = argv[0], argv[1]
    rest = argv[3:]
    split = rest.index("--")
    command, checks = rest[:split], rest[split + 1:]
    os.makedirs(out, exist_ok=True)
    html = os.path.join(out, name + ".html")
    names = {"@HTML@": html, "@JSON@": os.path.join(out, name + ".json"), "@OUT@": out}

    def sub(a):
        for k, v in names.items():
            a = a.replace(k, v)
        return a

    for stale in (html, names["@JSON@"]):
        if os.path.exists(stale):
            os.remove(stale)
    made = subprocess.run([sub(a) for a in command], capture_output=True, text=True)
    if made.returncode not in (0, 4):
        print("report_case: %s exited with %d:\n%s" % (command[0], made.returncode, made.stderr),
              file=sys.stderr)
        return 1
    if not os.path.getsize(html) if os.path.exists(html) else True:
        print("report_case: %s was not written" % html, file=sys.stderr)
        return 1
    checker = os.path.join(os.path.dirname(os.path.abspath(__file__)), "check_report.py")
    args = [sys.executable, checker, html] + [sub(a) for a in checks]
    args += ["--screenshot", os.path.join(out, name + ".png")]
    return subprocess.run(args).returncode


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
