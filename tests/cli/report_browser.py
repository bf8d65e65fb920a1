#!/usr/bin/python3
"""Opens a sheaf page (HTML report) in headless Chromium through the DevTools
protocol over --remote-debugging-pipe (file descriptors 3 and 4, messages
ended by NUL), with the Python standard library only, and prints one line
per check: PASS NAME, or FAIL NAME: why (tests/cli/test_report_browser.sh
counts them).

    report_browser.py CHROMIUM PAGE.html TAG --cells N --labels FILE [--hostile TEXT]...
                      [--shot OUT.png --shot-clip X,Y,W,H,SCALE]

Checks, once with JavaScript on and once with it off: the load event comes;
no console message of level error, no exception, no dialog; no network
request but the page's own file URL; a full-page screenshot has the page's
layout size and is not blank (a PNG decoded here: more than 1% of its pixels
differ from the background, and more than 8 colours); the heat map has N
cells; the shown column labels of the heat map are the names in FILE (one
per line, as the page cuts them) and their boxes do not overlap; a hostile
name is a text node of the page and no element other than the page's one
script exists.  With JavaScript on, a click on a column heading sorts the
table.  --shot writes a clipped, scaled screenshot (for the README).
"""
import argparse
import base64
import fcntl
import json
import os
import shutil
import signal
import struct
import subprocess
import sys
import tempfile
import time
import zlib

TIMEOUT_S = 90


class Browser:
    def __init__(self, exe, profile):
        r_cmd, w_cmd = os.pipe()   # we write commands, Chromium reads them on fd 3
        r_evt, w_evt = os.pipe()   # Chromium writes on fd 4, we read
        # Copies above 4, so that the dup2 onto 3 and 4 in the child clobbers none of them;
        # os.pipe's descriptors are not inherited, the dup2 results are.
        child_in, child_out = fcntl.fcntl(r_cmd, fcntl.F_DUPFD, 10), fcntl.fcntl(w_evt, fcntl.F_DUPFD, 10)

        def child():
            os.dup2(child_in, 3)
            os.dup2(child_out, 4)
            os.setsid()

        args = [exe, "--headless", "--no-sandbox", "--disable-gpu", "--remote-debugging-pipe",
                "--user-data-dir=" + profile, "--no-first-run", "--no-default-browser-check",
                "--disable-dev-shm-usage", "--disable-crash-reporter",
                "--disable-extensions", "--disable-background-networking", "--disable-sync",
                "--disable-component-update", "--disable-default-apps", "--mute-audio",
                "--hide-scrollbars", "about:blank"]
        self.proc = subprocess.Popen(args, preexec_fn=child, close_fds=False, stdin=subprocess.DEVNULL,
                                     stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        for fd in (r_cmd, w_evt, child_in, child_out):
            os.close(fd)
        self.w, self.r = w_cmd, r_evt
        self.buf = b""
        self.next_id = 0
        self.events = []
        self.session = None
        self.deadline = time.monotonic() + TIMEOUT_S

    def close(self):
        try:
            os.killpg(self.proc.pid, signal.SIGKILL)
        except OSError:
            pass
        self.proc.wait()
        for fd in (self.w, self.r):
            try:
                os.close(fd)
            except OSError:
                pass

    def _read_message(self):
        while b"\0" not in self.buf:
            if time.monotonic() > self.deadline:
                raise TimeoutError("no answer from Chromium")
            chunk = os.read(self.r, 1 << 20)
            if not chunk:
                raise EOFError("Chromium closed the pipe")
            self.buf += chunk
        msg, self.buf = self.buf.split(b"\0", 1)
        return json.loads(msg)

    def call(self, method, params=None, session=True):
        self.next_id += 1
        msg = {"id": self.next_id, "method": method, "params": params or {}}
        if session and self.session:
            msg["sessionId"] = self.session
        os.write(self.w, json.dumps(msg).encode() + b"\0")
        while True:
            m = self._read_message()
            if m.get("id") == self.next_id:
                if "error" in m:
                    raise RuntimeError(f"{method}: {m['error']}")
                return m["result"]
            if "method" in m:
                self.events.append(m)

    def wait_event(self, method):
        for i, e in enumerate(self.events):
            if e["method"] == method:
                return self.events.pop(i)
        while True:
            m = self._read_message()
            if m.get("method") == method:
                return m
            if "method" in m:
                self.events.append(m)


def png_pixels(data):
    """Width, height and rows of RGB(A) tuples of a PNG (8-bit, colour type 2 or 6)."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    pos, idat = 8, b""
    w = h = ctype = None
    while pos < len(data):
        n, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + n]
        if kind == b"IHDR":
            w, h, depth, ctype = struct.unpack(">IIBB", body[:10])
            assert depth == 8 and ctype in (2, 6), (depth, ctype)
        elif kind == b"IDAT":
            idat += body
        pos += 12 + n
    bpp = 3 if ctype == 2 else 4
    raw = zlib.decompress(idat)
    stride = w * bpp
    rows, prev = [], bytearray(stride)
    for y in range(h):
        f = raw[y * (stride + 1)]
        line = bytearray(raw[y * (stride + 1) + 1:(y + 1) * (stride + 1)])
        for x in range(stride):
            a = line[x - bpp] if x >= bpp else 0
            b = prev[x]
            c = prev[x - bpp] if x >= bpp else 0
            if f == 1:
                line[x] = (line[x] + a) & 255
            elif f == 2:
                line[x] = (line[x] + b) & 255
            elif f == 3:
                line[x] = (line[x] + (a + b) // 2) & 255
            elif f == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                line[x] = (line[x] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 255
        rows.append(bytes(line))
        prev = line
    return w, h, bpp, rows


def blank_stats(png):
    w, h, bpp, rows = png_pixels(png)
    bg = rows[0][:3]
    colours, differ, total = set(), 0, 0
    for y in range(h):
        row = rows[y]
        for x in range(0, w * bpp, bpp):
            px = row[x:x + 3]
            total += 1
            if px != bg:
                differ += 1
            if len(colours) < 64:
                colours.add(px)
    return w, h, differ / max(total, 1), len(colours)


class Checks:
    def __init__(self, tag):
        self.tag = tag
        self.failed = 0

    def check(self, name, ok, why=""):
        if ok:
            print(f"PASS {self.tag}.{name}")
        else:
            self.failed += 1
            print(f"FAIL {self.tag}.{name}: {why}")


def boxes(b, root, selector):
    ids = b.call("DOM.querySelectorAll", {"nodeId": root, "selector": selector})["nodeIds"]
    out = []
    for nid in ids:
        try:
            q = b.call("DOM.getBoxModel", {"nodeId": nid})["model"]["border"]
        except RuntimeError:
            out.append((nid, None))
            continue
        xs, ys = q[0::2], q[1::2]
        out.append((nid, (min(xs), min(ys), max(xs), max(ys))))
    return out


def node_text(b, nid):
    html = b.call("DOM.getOuterHTML", {"nodeId": nid})["outerHTML"]
    inner = html[html.index(">") + 1:html.rindex("<")]
    return (inner.replace("&lt;", "<").replace("&gt;", ">").replace("&quot;", '"')
            .replace("&#39;", "'").replace("&amp;", "&"))


def overlaps(bx):
    bx = sorted(bx)
    for i in range(len(bx)):
        for j in range(i + 1, len(bx)):
            a, c = bx[i], bx[j]
            if c[0] >= a[2] - 0.5:
                break
            if min(a[2], c[2]) - max(a[0], c[0]) > 0.5 and min(a[3], c[3]) - max(a[1], c[1]) > 0.5:
                return (a, c)
    return None


def run(b, args, js, c):
    b.session = None
    b.events = []
    try:
        target = b.call("Target.createTarget", {"url": "about:blank"}, session=False)["targetId"]
        b.session = b.call("Target.attachToTarget", {"targetId": target, "flatten": True},
                           session=False)["sessionId"]
        for m in ("Page.enable", "Runtime.enable", "Log.enable", "Network.enable", "DOM.enable"):
            b.call(m)
        if not js:
            b.call("Emulation.setScriptExecutionDisabled", {"value": True})
        b.call("Emulation.setDeviceMetricsOverride",
               {"width": 1280, "height": 900, "deviceScaleFactor": 1, "mobile": False})
        url = "file://" + os.path.abspath(args.page)
        b.call("Page.navigate", {"url": url})
        b.wait_event("Page.loadEventFired")
        doc = b.call("DOM.getDocument", {"depth": 0})["root"]["nodeId"]
        metrics = b.call("Page.getLayoutMetrics")
        size = metrics.get("cssContentSize") or metrics["contentSize"]
        W, H = int(size["width"]), int(size["height"])
        shot = base64.b64decode(b.call("Page.captureScreenshot", {
            "format": "png", "captureBeyondViewport": True,
            "clip": {"x": 0, "y": 0, "width": W, "height": H, "scale": 1}})["data"])
        # the same page at a quarter of the size, decoded here for the blank check
        small = base64.b64decode(b.call("Page.captureScreenshot", {
            "format": "png", "captureBeyondViewport": True,
            "clip": {"x": 0, "y": 0, "width": W, "height": H, "scale": 0.25}})["data"])
        cells = b.call("DOM.querySelectorAll", {"nodeId": doc, "selector": "#correlation rect.cell"})["nodeIds"]
        labels = boxes(b, doc, "#correlation text.label")
        hostile_nodes = []
        for text in args.hostile or []:
            quote = "'" if '"' in text else '"'
            res = b.call("DOM.performSearch", {"query": "//text()[contains(., %s%s%s)]" % (quote, text, quote)})
            hostile_nodes.append(res["resultCount"])
            b.call("DOM.discardSearchResults", {"searchId": res["searchId"]})
        scripts = b.call("DOM.querySelectorAll", {"nodeId": doc, "selector": "script"})["nodeIds"]
        texts = [node_text(b, nid) for nid, _ in labels]
        sorted_ok = None
        if js:
            expr = ("(function(){var t=document.getElementById('columns');var th=t.tHead.rows[0].cells[2];"
                    "th.click();var a=[].map.call(t.tBodies[0].rows,function(r){return parseFloat("
                    "r.cells[2].getAttribute('data-v'))});for(var i=1;i<a.length;i++)if(a[i]<a[i-1])"
                    "return false;return th.getAttribute('aria-sort')==='ascending';})()")
            sorted_ok = b.call("Runtime.evaluate", {"expression": expr, "returnByValue": True})["result"].get("value")
        if args.shot and js:
            x, y, w, h, s = (float(v) for v in args.shot_clip.split(","))
            img = b.call("Page.captureScreenshot", {"format": "png", "captureBeyondViewport": True,
                                                    "clip": {"x": x, "y": y, "width": w, "height": h, "scale": s}})
            with open(args.shot, "wb") as f:
                f.write(base64.b64decode(img["data"]))
        time.sleep(0.2)  # late console messages
        b.call("Page.getFrameTree")
        events = [e for e in b.events if e.get("sessionId") == b.session]
    finally:
        b.session = None

    errors = [e["params"].get("args") for e in events if e["method"] == "Runtime.consoleAPICalled"
              and e["params"].get("type") in ("error", "assert")]
    errors += [e["params"]["exceptionDetails"].get("text") for e in events if e["method"] == "Runtime.exceptionThrown"]
    errors += [e["params"]["entry"].get("text") for e in events if e["method"] == "Log.entryAdded"
               and e["params"]["entry"].get("level") == "error"]
    dialogs = [e for e in events if e["method"] == "Page.javascriptDialogOpening"]
    requests = [e["params"]["request"]["url"] for e in events if e["method"] == "Network.requestWillBeSent"]
    c.check("no_console_error", not errors, str(errors)[:300])
    c.check("no_dialog", not dialogs, str(dialogs)[:200])
    others = [u for u in requests if u != url]
    c.check("no_network_request", not others and url in requests,
            f"requests other than the page: {others[:5]}" if others else "the page itself was not requested")
    sw, sh = struct.unpack(">II", shot[16:24])  # IHDR, the first chunk
    c.check("screenshot_size", (sw, sh) == (W, H) and W >= 900 and H >= 1500,
            f"{sw}x{sh}, layout {W}x{H}")
    _, _, share, ncol = blank_stats(small)
    c.check("screenshot_not_blank", share > 0.01 and ncol > 8, f"{share:.4f} of pixels off the background, {ncol} colours")
    c.check("heatmap_cells", len(cells) == args.cells, f"{len(cells)} cells, want {args.cells}")
    want = [l for l in open(args.labels, encoding="utf-8").read().split("\n") if l]
    c.check("labels_are_the_columns", sorted(texts) == sorted(want * 2),
            f"missing {sorted(set(want) - set(texts))[:5]}, extra {sorted(set(texts) - set(want))[:5]}")
    b_ok = all(bx is not None for _, bx in labels)
    c.check("labels_have_boxes", b_ok and labels, f"{sum(bx is None for _, bx in labels)} without a box")
    c.check("labels_count", len(labels) == 2 * len(want), f"{len(labels)} labels, want {2 * len(want)}")
    ov = overlaps([bx for _, bx in labels if bx])
    c.check("labels_do_not_overlap", ov is None, f"overlap {ov}")
    for text, count in zip(args.hostile or [], hostile_nodes):
        c.check(f"hostile_name_is_text.{len(text)}", count > 0, f"{text!r} is not a text node")
    c.check("one_script_element", len(scripts) == 1, f"{len(scripts)} script elements")
    if js:
        c.check("table_sorts", sorted_ok is True, f"sort result {sorted_ok!r}")
    return labels


def main():
    p = argparse.ArgumentParser()
    p.add_argument("chromium")
    p.add_argument("page")
    p.add_argument("tag")
    p.add_argument("--cells", type=int, required=True)
    p.add_argument("--labels", required=True)
    p.add_argument("--hostile", action="append")
    p.add_argument("--shot")
    p.add_argument("--shot-clip", default="0,0,1280,1400,0.5")
    args = p.parse_args()
    profile = tempfile.mkdtemp(prefix="sheaf-chromium-")
    b = Browser(args.chromium, profile)
    try:
        for js in (True, False):  # a page of its own for each
            c = Checks(f"{args.tag}.{'js_on' if js else 'js_off'}")
            try:
                run(b, args, js, c)
            except Exception as e:  # one failure line, not a traceback
                c.check("browser_run", False, f"{type(e).__name__}: {e}")
    finally:
        b.close()
        shutil.rmtree(profile, ignore_errors=True)


if __name__ == "__main__":
    main()
