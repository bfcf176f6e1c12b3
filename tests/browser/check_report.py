#!/usr/bin/python3
"""Check a lopside HTML report in a real headless Chromium.

Standard library only.  Chromium is driven over the DevTools protocol on
--remote-debugging-pipe: the browser reads NUL-terminated JSON commands from
file descriptor 3 and writes NUL-terminated JSON replies/events to file
descriptor 4 (Chrome DevTools Protocol, "Transport" notes:
https://chromedevtools.github.io/devtools-protocol/).

Exit status: 0 every check passed, 1 a check failed, 2 usage error or the
browser could not be started/driven.  See README.md next to this file.
"""

import argparse
import array
import base64
import collections
import fcntl
import json
import math
import os
import pathlib
import re
import select
import shutil
import signal
import struct
import subprocess
import sys
import tempfile
import threading
import time
import zlib

HERE = pathlib.Path(__file__).resolve().parent
SELFTEST_DIR = HERE / "selftest"

DEFAULT_WIDTH = 1200          # CSS px, also the screenshot width
INITIAL_HEIGHT = 900          # CSS px viewport before the full-page resize
MAX_SHOT_HEIGHT = 16000       # CSS px; caps decode time for absurdly long pages
REL_TOL = 1e-9                # relative tolerance for --compare-json


class UsageError(Exception):
    """Bad command line or bad input file: exit status 2."""


class BrowserError(Exception):
    """Chromium could not be started or stopped answering: exit status 2."""


# --------------------------------------------------------------------------
# Browser process and DevTools pipe
# --------------------------------------------------------------------------

def find_chromium(explicit):
    cands = [explicit] if explicit else [
        os.environ.get("LOPSIDE_CHROMIUM"), "/usr/bin/chromium",
        shutil.which("chromium"), shutil.which("chromium-browser"),
        shutil.which("google-chrome"), shutil.which("chrome")]
    for c in cands:
        if c and os.path.isfile(c) and os.access(c, os.X_OK):
            return c
    raise BrowserError("no Chromium executable found (tried %s); pass --chromium PATH"
                       % (", ".join(c for c in cands if c) or "nothing"))


def chromium_major(exe):
    try:
        out = subprocess.run([exe, "--version"], stdout=subprocess.PIPE,
                             stderr=subprocess.DEVNULL, timeout=20).stdout
    except (OSError, subprocess.TimeoutExpired) as e:
        raise BrowserError("cannot run %s --version: %s" % (exe, e))
    m = re.search(rb"(\d+)\.\d+\.\d+", out)
    return int(m.group(1)) if m else 0


def become_subreaper():
    """Let browser processes orphaned by the kill be re-parented to us
    (prctl PR_SET_CHILD_SUBREAPER, Linux >= 3.4) so reap_orphans() can end
    and reap them; without it they would go to init.  Best effort."""
    try:
        import ctypes
        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(36, 1, 0, 0, 0)          # 36 = PR_SET_CHILD_SUBREAPER
    except (OSError, AttributeError):
        pass


def reap_orphans(wait=2.0):
    """SIGKILL and reap every remaining child of this process.  Only browser
    processes are children at this point (Chromium and, as subreaper, the
    helpers it left behind)."""
    me = str(os.getpid())
    deadline = time.monotonic() + wait
    while True:
        kids = []
        for d in os.listdir("/proc"):
            if not d.isdigit():
                continue
            try:
                with open("/proc/%s/stat" % d, "rb") as f:
                    stat = f.read().decode("ascii", "replace")
            except OSError:
                continue
            fields = stat.rsplit(")", 1)[-1].split()
            if len(fields) > 1 and fields[1] == me:
                kids.append(int(d))
        for pid in kids:
            try:
                os.kill(pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
        try:
            while os.waitpid(-1, os.WNOHANG)[0] > 0:
                pass
        except ChildProcessError:
            pass
        if not kids or time.monotonic() > deadline:
            return
        time.sleep(0.05)


class Browser:
    """One headless Chromium; pages are opened as separate targets."""

    def __init__(self, exe, overall_timeout):
        self.exe = exe
        self.proc = None
        self.tmp = tempfile.mkdtemp(prefix="lopside-browser-")
        self.next_id = 0
        self.buf = b""
        self.replies = {}
        self.events = []              # (sessionId or None, method, params)
        self.wfd = self.rfd = None
        self.dead_reason = None
        self._watchdog = threading.Timer(overall_timeout, self._on_overall_timeout)
        self._watchdog.daemon = True
        try:
            self._start()
        except BaseException:
            self.close()        # kill whatever started, remove the profile
            raise

    # -- lifecycle ---------------------------------------------------------

    def _start(self):
        become_subreaper()
        major = chromium_major(self.exe)
        # "--headless=new" exists from Chromium 109 on (and is the only headless
        # mode of the full browser from 132 on); older ones only know --headless.
        headless = "--headless=new" if major >= 109 else "--headless"
        udd = os.path.join(self.tmp, "profile")
        args = [
            self.exe, headless, "--no-sandbox", "--disable-gpu",
            "--user-data-dir=" + udd, "--disk-cache-dir=" + os.path.join(self.tmp, "cache"),
            "--no-first-run", "--no-default-browser-check", "--remote-debugging-pipe",
            "--window-size=%d,%d" % (DEFAULT_WIDTH, INITIAL_HEIGHT),
            "--force-device-scale-factor=1", "--hide-scrollbars", "--mute-audio",
            "--force-color-profile=srgb", "--font-render-hinting=none",
            # networking off: every host name fails to resolve, every URL goes
            # to a dead proxy (port 9 = discard, nothing listens), and loopback
            # is not exempt from that proxy (<-loopback>).
            "--host-resolver-rules=MAP * ~NOTFOUND",
            "--proxy-server=127.0.0.1:9", "--proxy-bypass-list=<-loopback>",
            "--no-pings", "--disable-background-networking", "--disable-component-update",
            "--disable-domain-reliability", "--disable-sync", "--disable-default-apps",
            "--disable-extensions", "--disable-client-side-phishing-detection",
            "--disable-breakpad", "--disable-crash-reporter", "--metrics-recording-only",
            "--disable-field-trial-config", "--safebrowsing-disable-auto-update",
            "--disable-features=Translate,OptimizationHints,MediaRouter,"
            "DialMediaRouteProvider,AutofillServerCommunication,"
            "CertificateTransparencyComponentUpdater,HttpsUpgrades,InterestFeedContentSuggestions",
            "--disable-dev-shm-usage", "about:blank",
        ]

        cmd_r, cmd_w = os.pipe()      # we write cmd_w -> browser reads fd 3
        res_r, res_w = os.pipe()      # browser writes fd 4 -> we read res_r
        # While Popen runs, fds 3 and 4 must be occupied in this process so the
        # internal exec-error pipe of subprocess cannot land on them (our
        # preexec dup2 would otherwise overwrite it and Popen would block).
        placeholders = []
        for fd in (3, 4):
            try:
                os.fstat(fd)
            except OSError:
                placeholders.append(os.open(os.devnull, os.O_RDONLY))
        hi_r = fcntl.fcntl(cmd_r, fcntl.F_DUPFD, 20)
        hi_w = fcntl.fcntl(res_w, fcntl.F_DUPFD, 20)

        def child_fds():
            os.dup2(hi_r, 3)
            os.dup2(hi_w, 4)

        env = dict(os.environ)
        env["HOME"] = self.tmp                      # nothing lands in the real $HOME
        env["XDG_CONFIG_HOME"] = os.path.join(self.tmp, "config")
        env["XDG_CACHE_HOME"] = os.path.join(self.tmp, "cache")
        self.stderr_path = os.path.join(self.tmp, "chromium-stderr.txt")
        try:
            with open(self.stderr_path, "wb") as err:
                self.proc = subprocess.Popen(
                    args, stdin=subprocess.DEVNULL, stdout=err, stderr=err,
                    pass_fds=(3, 4), preexec_fn=child_fds,
                    start_new_session=True, env=env)
        except OSError as e:
            raise BrowserError("cannot start %s: %s" % (self.exe, e))
        finally:
            for fd in [cmd_r, res_w, hi_r, hi_w] + placeholders:
                os.close(fd)
        self.wfd, self.rfd = cmd_w, res_r
        os.set_blocking(self.rfd, False)
        self._watchdog.start()
        try:
            ver = self.call("Browser.getVersion", timeout=20)
        except BrowserError as e:
            raise BrowserError("Chromium did not answer on the DevTools pipe: %s%s"
                               % (e, self._stderr_tail()))
        self.version = ver.get("product", "?")

    def _stderr_tail(self):
        try:
            with open(self.stderr_path, "rb") as f:
                lines = [ln for ln in f.read().decode("utf-8", "replace").splitlines()
                         if ln.strip() and "unexpected operator" not in ln]
        except OSError:
            return ""
        return ("\n  chromium stderr (last lines):\n    " + "\n    ".join(lines[-8:])
                if lines else "")

    def _on_overall_timeout(self):
        self.dead_reason = "overall timeout reached; Chromium killed"
        self._kill()

    def _kill(self):
        if self.proc and self.proc.poll() is None:
            try:
                # start_new_session made the browser a group leader; its
                # renderer/zygote children share the group, so this reaps all.
                os.killpg(self.proc.pid, signal.SIGKILL)
            except (ProcessLookupError, PermissionError):
                pass
        if self.proc:
            try:
                self.proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                pass

    def close(self):
        self._watchdog.cancel()
        if self.proc and self.proc.poll() is None and self.wfd is not None:
            try:
                self.send("Browser.close")
                self.proc.wait(timeout=3)
            except (BrowserError, OSError, subprocess.TimeoutExpired):
                pass
        if self.proc:
            try:    # leftovers of the group (e.g. zygote) even after a clean exit
                os.killpg(self.proc.pid, signal.SIGKILL)
            except (ProcessLookupError, PermissionError):
                pass
        self._kill()
        reap_orphans()
        for fd in (self.wfd, self.rfd):
            if fd is not None:
                try:
                    os.close(fd)
                except OSError:
                    pass
        self.wfd = self.rfd = None
        shutil.rmtree(self.tmp, ignore_errors=True)

    # -- protocol ----------------------------------------------------------

    def send(self, method, params=None, session=None):
        self.next_id += 1
        msg = {"id": self.next_id, "method": method, "params": params or {}}
        if session:
            msg["sessionId"] = session
        data = json.dumps(msg).encode() + b"\0"
        try:
            while data:
                n = os.write(self.wfd, data)
                data = data[n:]
        except OSError as e:
            if self.dead_reason:
                raise BrowserError(self.dead_reason)
            try:
                status = self.proc.wait(timeout=2)
            except subprocess.TimeoutExpired:
                raise BrowserError("writing to the DevTools pipe failed (%s)" % e)
            raise BrowserError("Chromium exited with status %s" % status)
        return self.next_id

    def _pump(self, timeout):
        """Read whatever arrives within timeout seconds and dispatch it."""
        if self.proc.poll() is not None and not self.buf:
            raise BrowserError(self.dead_reason or
                               "Chromium exited (status %s)" % self.proc.returncode)
        r, _, _ = select.select([self.rfd], [], [], max(0.0, timeout))
        if not r:
            return
        try:
            chunk = os.read(self.rfd, 1 << 20)
        except BlockingIOError:
            return
        if not chunk:
            self.proc.poll()
            raise BrowserError(self.dead_reason or "DevTools pipe closed by Chromium")
        self.buf += chunk
        while b"\0" in self.buf:
            raw, self.buf = self.buf.split(b"\0", 1)
            msg = json.loads(raw)
            if "id" in msg:
                self.replies[msg["id"]] = msg
            else:
                self.events.append((msg.get("sessionId"), msg.get("method"),
                                    msg.get("params", {})))

    def call(self, method, params=None, session=None, timeout=15):
        mid = self.send(method, params, session)
        deadline = time.monotonic() + timeout
        while mid not in self.replies:
            left = deadline - time.monotonic()
            if left <= 0:
                raise BrowserError("no reply to %s within %g s" % (method, timeout))
            self._pump(min(left, 0.5))
        reply = self.replies.pop(mid)
        if "error" in reply:
            raise ProtocolError(method, reply["error"])
        return reply.get("result", {})

    def wait_for(self, pred, timeout):
        """Pump until pred(event) holds for some event; return it or None."""
        deadline = time.monotonic() + timeout
        seen = 0
        while True:
            for ev in self.events[seen:]:
                if pred(ev):
                    return ev
            seen = len(self.events)
            left = deadline - time.monotonic()
            if left <= 0:
                return None
            self._pump(min(left, 0.2))

    def drain(self, seconds):
        deadline = time.monotonic() + seconds
        while time.monotonic() < deadline:
            self._pump(deadline - time.monotonic())


class ProtocolError(Exception):
    def __init__(self, method, err):
        super().__init__("%s: %s" % (method, err.get("message", err)))
        self.err = err


# --------------------------------------------------------------------------
# PNG decoding (zlib + filter reversal, RFC 2083 / PNG spec section 9)
# --------------------------------------------------------------------------

def _swar_add(a, b, m7, m8):
    """Bytewise (a + b) mod 256 on big integers holding one byte per lane:
    add the low 7 bits (cannot overflow a lane), then fix bit 7 by xor."""
    return ((a & m7) + (b & m7)) ^ ((a ^ b) & m8)


def decode_png(data):
    """Return (width, height, bytes-per-pixel, pixel bytes) of an 8-bit,
    non-interlaced PNG.  Sub and Up rows are undone with whole-row big-integer
    arithmetic (fast); Average and Paeth need a per-byte Python loop."""
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("not a PNG file")
    pos, idat, ihdr, palette = 8, [], None, None
    while pos + 8 <= len(data):
        length, ctype = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        pos += 12 + length
        if ctype == b"IHDR":
            ihdr = struct.unpack(">IIBBBBB", body)
        elif ctype == b"PLTE":
            palette = body
        elif ctype == b"IDAT":
            idat.append(body)
        elif ctype == b"IEND":
            break
    if ihdr is None:
        raise ValueError("PNG without IHDR")
    w, h, depth, colour, _comp, _filt, interlace = ihdr
    channels = {0: 1, 2: 3, 3: 1, 4: 2, 6: 4}.get(colour)
    if depth != 8 or interlace != 0 or channels is None:
        raise ValueError("unsupported PNG (bit depth %d, colour type %d, interlace %d)"
                         % (depth, colour, interlace))
    raw = zlib.decompress(b"".join(idat))
    bpp, stride = channels, w * channels
    if len(raw) < h * (stride + 1):
        raise ValueError("PNG image data too short")
    m7 = int.from_bytes(b"\x7f" * stride, "big")
    m8 = int.from_bytes(b"\x80" * stride, "big")
    out = bytearray(h * stride)
    prev = bytes(stride)
    filters = collections.Counter()
    for y in range(h):
        i = y * (stride + 1)
        ft = raw[i]
        filters[ft] += 1
        line = raw[i + 1:i + 1 + stride]
        if ft == 0:
            cur = bytes(line)
        elif ft == 1:       # Sub: running sum per channel = log-step scan
            v, s = int.from_bytes(line, "big"), bpp
            while s < stride:
                v = _swar_add(v, v >> (8 * s), m7, m8)
                s *= 2
            cur = v.to_bytes(stride, "big")
        elif ft == 2:       # Up
            cur = _swar_add(int.from_bytes(line, "big"), int.from_bytes(prev, "big"),
                            m7, m8).to_bytes(stride, "big")
        elif ft == 3:       # Average
            c = bytearray(line)
            for x in range(stride):
                left = c[x - bpp] if x >= bpp else 0
                c[x] = (c[x] + ((left + prev[x]) >> 1)) & 0xFF
            cur = bytes(c)
        elif ft == 4:       # Paeth
            c = bytearray(line)
            for x in range(stride):
                if x >= bpp:
                    a, cc = c[x - bpp], prev[x - bpp]
                else:
                    a = cc = 0
                b = prev[x]
                p = a + b - cc
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - cc)
                pred = a if (pa <= pb and pa <= pc) else (b if pb <= pc else cc)
                c[x] = (c[x] + pred) & 0xFF
            cur = bytes(c)
        else:
            raise ValueError("bad PNG filter type %d in row %d" % (ft, y))
        out[y * stride:(y + 1) * stride] = cur
        prev = cur
    if colour == 3 and palette:
        bpp = 3
        out = bytearray(b"".join(palette[3 * k:3 * k + 3] for k in out))
    return w, h, bpp, bytes(out), filters


def png_blank_stats(data):
    """(width, height, share of pixels differing from the most common colour,
    number of distinct colours - or at least 8 when there are 8 or more)."""
    w, h, bpp, pix, _ = decode_png(data)
    total = w * h
    if bpp != 4:
        # widen to 4 bytes per pixel with extended-slice copies (C speed)
        wide = bytearray(4 * total)
        for ch in range(bpp):
            wide[ch::4] = pix[ch::bpp]
        pix = wide
    if not total:
        return w, h, 0.0, 0
    # One 32-bit int per pixel.  Candidates for the most common colour come
    # from every 7th pixel (7 is coprime to usual widths, so no column
    # aliasing); their exact counts come from array.count, which runs in C.
    ints = array.array("I", bytes(pix))
    sample = collections.Counter(memoryview(ints)[::7])
    top = max(ints.count(colour) for colour, _ in sample.most_common(3))
    distinct = len(sample) if len(sample) >= 8 else len(set(ints))
    return w, h, (total - top) / total, distinct


# --------------------------------------------------------------------------
# Page checks
# --------------------------------------------------------------------------

class Result:
    def __init__(self):
        self.checks = []            # (name, ok, summary, details)
        self.usage_error = None

    def add(self, name, ok, summary, details=()):
        self.checks.append((name, ok, summary, list(details)))

    @property
    def failed(self):
        return [c[0] for c in self.checks if not c[1]]

    def print(self, out=sys.stdout, indent=""):
        for name, ok, summary, details in self.checks:
            print("%s%s  %-11s %s" % (indent, "PASS" if ok else "FAIL", name, summary), file=out)
            for d in details[:200]:
                print("%s        - %s" % (indent, d), file=out)
            if len(details) > 200:
                print("%s        - ... %d more" % (indent, len(details) - 200), file=out)
        out.flush()


# Everything the DOM checks need, gathered by one Runtime.evaluate.
DOM_PROBE = r"""
(() => {
  const spec = %s;
  const out = {selectors: [], texts: [], keys: [], charts: [], badWords: []};
  const body = document.body;
  out.htmlLength = document.documentElement.outerHTML.length;
  out.title = document.title;
  const text = body ? body.innerText : '';
  out.textLength = text.trim().length;
  let visual = 0;
  if (body) for (const e of body.querySelectorAll('svg,canvas,img,video,table')) {
    const r = e.getBoundingClientRect();
    if (r.width > 0 && r.height > 0) visual++;
  }
  out.visual = visual;
  out.hasBody = !!body;
  for (const s of spec.selectors) {
    try { out.selectors.push(document.querySelectorAll(s).length); }
    catch (e) { out.selectors.push('invalid selector: ' + e.message); }
  }
  const squash = t => t.replace(/\s+/g, ' ');
  for (const t of spec.texts)
    out.texts.push(text.includes(t) || squash(text).includes(squash(t)));
  if (spec.keySelector !== null) {
    try {
      for (const e of document.querySelectorAll(spec.keySelector))
        out.keys.push({key: e.getAttribute('data-key'), value: e.getAttribute('data-value'),
                       tag: e.tagName.toLowerCase(), text: (e.innerText || e.textContent || '').trim().slice(0, 60)});
    } catch (e) { out.keySelectorError = e.message; }
  }
  document.querySelectorAll('figure.chart svg').forEach((svg, i) => {
    const t = svg.querySelector(':scope > title'), d = svg.querySelector(':scope > desc');
    const fig = svg.closest('figure');
    out.charts.push({index: i, id: fig.id || '', title: t ? t.textContent.trim() : null,
                     desc: d ? d.textContent.trim() : null});
  });
  // Visible text plus the text inside every SVG (labels, <title>, <desc>),
  // which innerText may not report.
  let hay = text;
  document.querySelectorAll('svg').forEach(s => { hay += '\n' + s.textContent; });
  const re = /(?<![A-Za-z0-9_])[-+]?(nan|inf|infinity)(?![A-Za-z0-9_])/gi;
  let m;
  while ((m = re.exec(hay)) !== null && out.badWords.length < 50) {
    const a = Math.max(0, m.index - 30), b = Math.min(hay.length, m.index + m[0].length + 30);
    out.badWords.push(squash(hay.slice(a, b)).trim());
  }
  return out;
})()
"""

SETTLE = r"""
new Promise(resolve => {
  const done = () => requestAnimationFrame(() => requestAnimationFrame(() => setTimeout(resolve, 150)));
  (document.fonts && document.fonts.ready ? document.fonts.ready : Promise.resolve()).then(done, done);
})
"""

SI_PREFIX = {"y": 1e-24, "z": 1e-21, "a": 1e-18, "f": 1e-15, "p": 1e-12, "n": 1e-9,
             "u": 1e-6, "\u00b5": 1e-6, "\u03bc": 1e-6, "m": 1e-3, "k": 1e3,
             "M": 1e6, "G": 1e9, "T": 1e12, "P": 1e15}
NUM_RE = re.compile(r"^\s*([+-]?)(\d*)(?:\.(\d*))?(?:[eE]([+-]?\d+))?\s*$")


def parse_dom_number(s):
    """data-value -> (value, half unit of its last printed digit).  Plain
    decimal/exponent notation in SI base units; a trailing SI prefix
    letter (e.g. '12.5m') is also accepted."""
    s = s.strip().replace("\u2212", "-")
    scale = 1.0
    if s and s[-1] in SI_PREFIX and not s[-1].isdigit():
        scale, s = SI_PREFIX[s[-1]], s[:-1]
    m = NUM_RE.match(s)
    if not m or not (m.group(2) or m.group(3)):
        return None
    value = float(s) * scale
    frac = len(m.group(3) or "")
    exp = int(m.group(4) or 0)
    return value, 0.5 * 10.0 ** (exp - frac) * scale


def json_lookup(doc, path):
    cur = doc
    for part in path.split("."):
        if isinstance(cur, dict) and part in cur:
            cur = cur[part]
        elif isinstance(cur, list) and re.fullmatch(r"\d+", part) and int(part) < len(cur):
            cur = cur[int(part)]
        else:
            raise KeyError(part)
    return cur


def compare_values(keys, doc):
    """Return (number compared, list of mismatch texts)."""
    bad = []
    for k in keys:
        where = "<%s data-key=%r>" % (k["tag"], k["key"])
        if not k["key"]:
            bad.append("%s: element has no data-key" % where)
            continue
        if k["value"] is None:
            bad.append("%s: element has no data-value" % where)
            continue
        try:
            want = json_lookup(doc, k["key"])
        except KeyError as e:
            bad.append("%s: key path not in JSON (missing %r)" % (where, str(e.args[0])))
            continue
        got = k["value"]
        if isinstance(want, bool) or want is None or isinstance(want, str):
            exp = {True: "true", False: "false", None: ""}.get(want, want) \
                if not isinstance(want, str) else want
            if got.strip() != exp and not (want is None and got.strip() == "null"):
                bad.append("%s: page has %r, JSON has %r" % (where, got, want))
            continue
        if isinstance(want, (dict, list)):
            bad.append("%s: JSON value is a %s, not a number (use a longer path)"
                       % (where, type(want).__name__))
            continue
        parsed = parse_dom_number(got)
        if parsed is None:
            bad.append("%s: data-value %r is not a number (JSON has %r)" % (where, got, want))
            continue
        val, half_ulp = parsed
        want = float(want)
        if not (math.isfinite(val) and math.isfinite(want)):
            bad.append("%s: non-finite value (page %r, JSON %r)" % (where, got, want))
            continue
        diff = abs(val - want)
        if diff <= REL_TOL * max(abs(val), abs(want)) or diff <= half_ulp * (1 + 1e-12):
            continue
        bad.append("%s: page has %s (= %.12g), JSON has %.12g (difference %.3g, allowed %.3g)"
                   % (where, got, val, want, diff,
                      max(REL_TOL * max(abs(val), abs(want)), half_ulp)))
    return len(keys), bad


def is_own_url(url, page_url):
    u = url.split("#", 1)[0]
    return u == page_url or url.startswith("data:")


def check_page(browser, path, opts):
    """Open one file and run every check.  opts: dict with keys selectors
    [(css, n)], texts [str], compare_json (dict or None), key_selector,
    screenshot (path or None), pdf (path or None), load_timeout, width."""
    res = Result()
    page_url = pathlib.Path(path).resolve().as_uri()
    sid = None
    target = None
    try:
        target = browser.call("Target.createTarget", {"url": "about:blank"})["targetId"]
        sid = browser.call("Target.attachToTarget",
                           {"targetId": target, "flatten": True})["sessionId"]
        for dom in ("Page", "Runtime", "Log", "Network"):
            browser.call(dom + ".enable", session=sid)
        browser.call("Page.setLifecycleEventsEnabled", {"enabled": True}, session=sid)
        browser.call("Emulation.setDeviceMetricsOverride",
                     {"width": opts["width"], "height": INITIAL_HEIGHT,
                      "deviceScaleFactor": 1, "mobile": False}, session=sid)
        first_event = len(browser.events)
        t0 = time.monotonic()
        nav = browser.call("Page.navigate", {"url": page_url}, session=sid)
        if nav.get("errorText"):
            res.add("load", False, "navigation to %s failed: %s" % (page_url, nav["errorText"]))
            return res
        loader = nav.get("loaderId")

        # Page.loadEventFired carries no frame/loader id; the lifecycle 'load'
        # event of our own loader is the same moment without the risk of
        # picking up the about:blank load of the new tab.
        def is_load(ev):
            s, m, p = ev
            if s != sid:
                return False
            if m == "Page.lifecycleEvent" and p.get("name") == "load":
                return loader is None or p.get("loaderId") == loader
            return m == "Page.loadEventFired" and loader is None
        got = browser.wait_for(is_load, opts["load_timeout"])
        if got is None:
            res.add("load", False, "no load event within %g s" % opts["load_timeout"])
            return res
        try:
            browser.call("Runtime.evaluate", {"expression": SETTLE, "awaitPromise": True},
                         session=sid, timeout=10)
        except BrowserError:
            pass            # a page that never paints still gets checked below
        browser.drain(0.1)
        res.add("load", True, "loaded %s in %.2f s" % (os.path.basename(path),
                                                        time.monotonic() - t0))

        probe = browser.call("Runtime.evaluate", {
            "expression": DOM_PROBE % json.dumps({
                "selectors": [s for s, _ in opts["selectors"]], "texts": opts["texts"],
                "keySelector": opts["key_selector"] if opts["compare_json"] is not None else None}),
            "returnByValue": True}, session=sid)
        if "exceptionDetails" in probe:
            raise BrowserError("DOM probe failed: %s" % probe["exceptionDetails"].get("text"))
        dom = probe["result"]["value"]

        # ---- network -----------------------------------------------------
        evs = [(m, p) for s, m, p in browser.events[first_event:] if s == sid]
        reqs = [p["request"]["url"] for m, p in evs if m == "Network.requestWillBeSent"]
        foreign = [u for u in reqs if not is_own_url(u, page_url)]
        if foreign:
            res.add("network", False, "%d request(s) beyond the report's own file" % len(foreign),
                    ["requested %s" % (u if len(u) < 200 else u[:200] + "...") for u in foreign])
        else:
            res.add("network", True, "no request beyond the report's own file (%d request(s) seen)"
                    % len(reqs))

        # ---- console / exceptions / log ------------------------------------
        msgs = []
        for m, p in evs:
            if m == "Runtime.consoleAPICalled" and p.get("type") in ("error", "warning", "assert"):
                txt = " ".join(str(a.get("value", a.get("description", a.get("type", ""))))
                               for a in p.get("args", []))
                msgs.append("console.%s: %s" % (p["type"], txt))
            elif m == "Runtime.exceptionThrown":
                d = p.get("exceptionDetails", {})
                exc = d.get("exception", {}).get("description") or d.get("text", "")
                msgs.append("uncaught exception (line %s): %s"
                            % (d.get("lineNumber", "?"), exc.splitlines()[0] if exc else ""))
            elif m == "Log.entryAdded" and p["entry"].get("level") in ("error", "warning"):
                e = p["entry"]
                msgs.append("log %s [%s]: %s" % (e["level"], e.get("source", "?"), e.get("text", "")))
        if msgs:
            res.add("console", False, "%d error/warning message(s)" % len(msgs), msgs)
        else:
            res.add("console", True, "no console errors, warnings or uncaught exceptions")

        # ---- blank ---------------------------------------------------------
        if not dom["hasBody"] or (dom["textLength"] == 0 and dom["visual"] == 0):
            res.add("blank", False, "page is blank (no visible text, no svg/canvas/img/table)")
        else:
            res.add("blank", True, "%d characters of text, %d graphic/table element(s), "
                    "%d bytes of HTML" % (dom["textLength"], dom["visual"], dom["htmlLength"]))

        # ---- expectations ----------------------------------------------------
        if opts["selectors"]:
            bad, usage = [], []
            for (css, n), got_n in zip(opts["selectors"], dom["selectors"]):
                if isinstance(got_n, str):
                    usage.append("%r: %s" % (css, got_n))
                elif got_n < n:
                    bad.append("%r matches %d element(s), expected at least %d" % (css, got_n, n))
            if usage:
                res.usage_error = "; ".join(usage)
            res.add("selectors", not bad and not usage,
                    "%d of %d selector expectation(s) met"
                    % (len(opts["selectors"]) - len(bad) - len(usage), len(opts["selectors"])),
                    bad + usage)
        if opts["texts"]:
            missing = ["text not found: %r" % t for t, ok in zip(opts["texts"], dom["texts"]) if not ok]
            res.add("texts", not missing, "%d of %d text expectation(s) found"
                    % (len(opts["texts"]) - len(missing), len(opts["texts"])), missing)
        if opts["compare_json"] is not None:
            if dom.get("keySelectorError"):
                res.usage_error = "bad --json-key-selector: " + dom["keySelectorError"]
                res.add("json", False, res.usage_error)
            elif not dom["keys"]:
                res.add("json", False, "no element matches %r: nothing to compare with the JSON"
                        % opts["key_selector"])
            else:
                n, bad = compare_values(dom["keys"], opts["compare_json"])
                res.add("json", not bad, "%d of %d data-key value(s) equal the JSON"
                        % (n - len(bad), n), bad)

        # ---- charts ----------------------------------------------------------
        cbad = []
        for c in dom["charts"]:
            name = "chart #%d%s" % (c["index"] + 1, " (#%s)" % c["id"] if c["id"] else "")
            if not c["title"]:
                cbad.append("%s: svg has no non-empty <title> child" % name)
            if not c["desc"]:
                cbad.append("%s: svg has no non-empty <desc> child" % name)
        res.add("charts", not cbad, "%d figure.chart svg(s), %s" % (
            len(dom["charts"]), "all with <title> and <desc>" if not cbad else
            "%d problem(s)" % len(cbad)), cbad)

        # ---- NaN / Inf ---------------------------------------------------------
        res.add("nan-inf", not dom["badWords"],
                "no NaN/Inf in the text" if not dom["badWords"] else
                "%d NaN/Inf word(s) in the text" % len(dom["badWords"]),
                ["...%s..." % w for w in dom["badWords"]])

        # ---- screenshot ------------------------------------------------------
        if opts["screenshot"]:
            m = browser.call("Page.getLayoutMetrics", session=sid)
            size = m.get("cssContentSize") or m.get("contentSize")
            h = int(min(max(math.ceil(size["height"]), 1), MAX_SHOT_HEIGHT))
            browser.call("Emulation.setDeviceMetricsOverride",
                         {"width": opts["width"], "height": h, "deviceScaleFactor": 1,
                          "mobile": False}, session=sid)
            browser.call("Runtime.evaluate", {"expression": SETTLE, "awaitPromise": True},
                         session=sid, timeout=10)
            # optimizeForSpeed asks for low zlib effort and no PNG row filters,
            # which keeps the pure-Python decode below fast.
            shot = browser.call("Page.captureScreenshot",
                                {"format": "png", "optimizeForSpeed": True,
                                 "captureBeyondViewport": False}, session=sid, timeout=30)
            png = base64.b64decode(shot["data"])
            with open(opts["screenshot"], "wb") as f:
                f.write(png)
            try:
                w, hh, share, ncol = png_blank_stats(png)
            except (ValueError, zlib.error) as e:
                res.add("screenshot", False, "cannot decode the screenshot: %s" % e)
            else:
                ok = share > 0.01 and ncol >= 8
                res.add("screenshot", ok, "%s: %dx%d px, %.1f %% of pixels differ from the "
                        "background, %s%d distinct colours%s" % (
                            opts["screenshot"], w, hh, 100 * share,
                            "at least " if ncol >= 8 else "", ncol,
                            "" if ok else " - looks blank (need > 1 % and >= 8 colours)"))

        # ---- PDF -------------------------------------------------------------
        if opts["pdf"]:
            pdf = base64.b64decode(browser.call("Page.printToPDF", {
                "paperWidth": 8.27, "paperHeight": 11.69,      # A4 in inches
                "printBackground": True, "preferCSSPageSize": False},
                session=sid, timeout=30)["data"])
            with open(opts["pdf"], "wb") as f:
                f.write(pdf)
            pages = len(re.findall(rb"/Type\s*/Page(?![a-zA-Z])", pdf))
            ok = pdf.startswith(b"%PDF-") and b"%%EOF" in pdf[-1024:]
            res.add("pdf", ok, "%s: %d bytes%s%s" % (
                opts["pdf"], len(pdf), ", %d page object(s)" % pages if pages else "",
                "" if ok else " - not a complete PDF (%PDF- header or %%EOF trailer missing)"))
        return res
    except ProtocolError as e:
        raise BrowserError("DevTools command failed: %s" % e)
    finally:
        if target is not None and browser.proc.poll() is None:
            try:
                browser.call("Target.closeTarget", {"targetId": target}, timeout=5)
            except (BrowserError, ProtocolError):
                pass


# --------------------------------------------------------------------------
# Self-test
# --------------------------------------------------------------------------

# page -> (checks that must fail, checks that may also fail, options)
SELFTEST = [
    ("good.html", set(), set(), {
        "selectors": [("figure.chart svg", 1), ("[data-key]", 3), ("table tr", 2)],
        "texts": ["DC offset", "Charge asymmetry"], "json": "good.json", "shot": True, "pdf": True}),
    ("console_error.html", {"console"}, set(), {}),
    ("exception.html", {"console"}, set(), {}),
    ("csp.html", {"console"}, set(), {}),
    ("network.html", {"network"}, {"console"}, {}),
    ("blank.html", {"blank", "screenshot"}, set(), {"shot": True}),
    ("bad_content.html", {"json", "charts", "nan-inf", "selectors", "texts"}, set(), {
        "selectors": [("figure.chart svg", 1), ("table.nothing", 1)],
        "texts": ["DC offset", "Text that is not there"], "json": "good.json"}),
]

# Words a failure summary must contain so the page is caught for the right reason.
SELFTEST_WORDS = {
    "console_error.html": {"console": "console.error"},
    "exception.html": {"console": "uncaught exception"},
    "csp.html": {"console": "Content Security Policy"},
    "network.html": {"network": "10.255.255.1"},
    "bad_content.html": {"json": "dc_offset_a.value", "charts": "<desc>", "nan-inf": "NaN"},
}


def run_selftest(exe, args):
    tmp = tempfile.mkdtemp(prefix="lopside-selftest-")
    ok_all = True
    browser = Browser(exe, args.overall_timeout)
    try:
        print("selftest with %s" % browser.version)
        for page, must, may, o in SELFTEST:
            path = SELFTEST_DIR / page
            opts = base_opts(args)
            opts["selectors"] = o.get("selectors", [])
            opts["texts"] = o.get("texts", [])
            if "json" in o:
                with open(SELFTEST_DIR / o["json"]) as f:
                    opts["compare_json"] = json.load(f)
            if o.get("shot"):
                opts["screenshot"] = os.path.join(tmp, page + ".png")
            if o.get("pdf"):
                opts["pdf"] = os.path.join(tmp, page + ".pdf")
            t0 = time.monotonic()
            res = check_page(browser, path, opts)
            dt = time.monotonic() - t0
            print("== %s (%.1f s)" % (page, dt))
            res.print(indent="   ")
            failed = set(res.failed)
            problems = []
            if must - failed:
                problems.append("not caught by: %s" % ", ".join(sorted(must - failed)))
            if failed - must - may:
                problems.append("failed for an unexpected reason: %s"
                                % ", ".join(sorted(failed - must - may)))
            for name, word in SELFTEST_WORDS.get(page, {}).items():
                text = " ".join(s + " " + " ".join(d) for n, _, s, d in res.checks if n == name)
                if word not in text:
                    problems.append("%s failure does not mention %r" % (name, word))
            if dt > 10:
                problems.append("took %.1f s (> 10 s)" % dt)
            verdict = "passes as it should" if not must else \
                "caught for: " + ", ".join(sorted(must))
            if problems:
                ok_all = False
                print("   SELFTEST FAIL %s: %s" % (page, "; ".join(problems)))
            else:
                print("   selftest ok   %s %s" % (page, verdict))
    finally:
        browser.close()
        shutil.rmtree(tmp, ignore_errors=True)
    # The PNG decoder must handle every filter type, not only what this
    # Chromium happens to emit: round-trip a small image through all five.
    try:
        selftest_png_filters()
        print("   selftest ok   PNG decoder reverses filter types 0-4")
    except AssertionError as e:
        ok_all = False
        print("   SELFTEST FAIL PNG decoder: %s" % e)
    print("selftest %s" % ("PASSED" if ok_all else "FAILED"))
    return 0 if ok_all else 1


def selftest_png_filters():
    w, h, bpp = 37, 10, 4
    pix = bytes((x * 7 + y * 13 + c * 61 + (x * y) % 17) & 0xFF
                for y in range(h) for x in range(w) for c in range(bpp))
    stride = w * bpp
    raw = bytearray()
    prev = bytes(stride)
    for y in range(h):
        ft = y % 5
        row = pix[y * stride:(y + 1) * stride]
        raw.append(ft)
        for x in range(stride):
            a = row[x - bpp] if x >= bpp else 0
            b = prev[x]
            c = prev[x - bpp] if x >= bpp else 0
            if ft == 0:
                pred = 0
            elif ft == 1:
                pred = a
            elif ft == 2:
                pred = b
            elif ft == 3:
                pred = (a + b) >> 1
            else:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                pred = a if (pa <= pb and pa <= pc) else (b if pb <= pc else c)
            raw.append((row[x] - pred) & 0xFF)
        prev = row

    def chunk(t, body):
        return struct.pack(">I", len(body)) + t + body + struct.pack(">I", zlib.crc32(t + body))
    png = (b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", struct.pack(">IIBBBBB", w, h, 8, 6, 0, 0, 0))
           + chunk(b"IDAT", zlib.compress(bytes(raw))) + chunk(b"IEND", b""))
    dw, dh, dbpp, dpix, filters = decode_png(png)
    assert (dw, dh, dbpp) == (w, h, bpp), "wrong geometry"
    assert sorted(filters) == [0, 1, 2, 3, 4], "filters not all exercised"
    assert dpix == pix, "decoded pixels differ from the original"


# --------------------------------------------------------------------------
# Command line
# --------------------------------------------------------------------------

def parse_selector(spec):
    m = re.fullmatch(r"(.*\S)\s*=\s*(\d+)", spec, re.S)
    if m:
        return m.group(1), int(m.group(2))
    return spec, 1


def base_opts(args):
    return {"selectors": [], "texts": [], "compare_json": None,
            "key_selector": args.json_key_selector, "screenshot": None, "pdf": None,
            "load_timeout": args.load_timeout, "width": args.width}


def main(argv):
    ap = argparse.ArgumentParser(
        description="Check a self-contained HTML report in headless Chromium "
                    "(no network, no console errors, expected content, not blank).")
    ap.add_argument("report", nargs="?", help="the HTML file to check")
    ap.add_argument("--expect-selector", action="append", default=[], metavar="CSS[=N]",
                    help="CSS selector that must match at least N (default 1) elements; repeatable")
    ap.add_argument("--expect-text", action="append", default=[], metavar="TEXT",
                    help="text that must appear in document.body.innerText; repeatable")
    ap.add_argument("--compare-json", metavar="FILE.json",
                    help="compare every data-key/data-value element with this JSON")
    ap.add_argument("--json-key-selector", default="[data-key]", metavar="CSS",
                    help="elements compared with --compare-json (default: [data-key])")
    ap.add_argument("--screenshot", metavar="OUT.png", help="full-page screenshot; must not be blank")
    ap.add_argument("--print-pdf", metavar="OUT.pdf", help="print to an A4 PDF")
    ap.add_argument("--width", type=int, default=DEFAULT_WIDTH, help="viewport width, CSS px")
    ap.add_argument("--load-timeout", type=float, default=30.0, metavar="S",
                    help="seconds to wait for the load event (default 30)")
    ap.add_argument("--overall-timeout", type=float, default=120.0, metavar="S",
                    help="Chromium is killed after this many seconds (default 120)")
    ap.add_argument("--chromium", metavar="PATH",
                    help="browser executable (default: $LOPSIDE_CHROMIUM, /usr/bin/chromium, PATH)")
    ap.add_argument("--selftest", action="store_true",
                    help="check the pages in selftest/ and confirm each verdict")
    try:
        args = ap.parse_args(argv)
    except SystemExit as e:
        return 0 if e.code == 0 else 2
    if args.selftest == bool(args.report):
        print("check_report: give either a REPORT.html or --selftest", file=sys.stderr)
        return 2
    try:
        exe = find_chromium(args.chromium)
        if args.selftest:
            return run_selftest(exe, args)

        if not os.path.isfile(args.report):
            raise UsageError("no such file: %s" % args.report)
        opts = base_opts(args)
        opts["selectors"] = [parse_selector(s) for s in args.expect_selector]
        opts["texts"] = list(args.expect_text)
        if args.compare_json:
            try:
                with open(args.compare_json) as f:
                    opts["compare_json"] = json.load(f)
            except (OSError, ValueError) as e:
                raise UsageError("cannot read --compare-json %s: %s" % (args.compare_json, e))
        for flag, path in (("--screenshot", args.screenshot), ("--print-pdf", args.print_pdf)):
            if path:
                d = os.path.dirname(os.path.abspath(path))
                if not os.path.isdir(d):
                    raise UsageError("%s: directory %s does not exist" % (flag, d))
        opts["screenshot"], opts["pdf"] = args.screenshot, args.print_pdf

        browser = Browser(exe, args.overall_timeout)
        try:
            res = check_page(browser, args.report, opts)
        finally:
            browser.close()
        res.print()
        if res.usage_error:
            print("check_report: usage error: %s" % res.usage_error, file=sys.stderr)
            return 2
        if res.failed:
            print("check_report: FAILED %s: %s" % (args.report, ", ".join(res.failed)))
            return 1
        print("check_report: all %d checks passed for %s" % (len(res.checks), args.report))
        return 0
    except UsageError as e:
        print("check_report: usage error: %s" % e, file=sys.stderr)
        return 2
    except BrowserError as e:
        print("check_report: browser error: %s" % e, file=sys.stderr)
        return 2


def _terminate(signum, _frame):
    # Turn SIGTERM/SIGHUP (e.g. a CTest timeout) into SystemExit so the
    # finally blocks kill Chromium and remove the temporary profile.
    raise SystemExit(128 + signum)


if __name__ == "__main__":
    signal.signal(signal.SIGTERM, _terminate)
    signal.signal(signal.SIGHUP, _terminate)
    sys.exit(main(sys.argv[1:]))
