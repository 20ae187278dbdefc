"""Test support (not part of the package): render an HTML file in headless Chromium and measure it.

The browser is driven over the DevTools protocol on a pipe (``--remote-debugging-pipe``:
commands are JSON texts ended by a NUL byte, read by the browser on file descriptor 3,
answers and events written on descriptor 4), so only the standard library is needed.
One browser run per file gives:

* the layout at a given window width (screen media): the page's scroll width against the
  viewport width, the outermost elements whose box sticks out of the page, the elements that
  scroll sideways inside themselves, where an element named by a CSS selector lies;
* the same overflow measure under print media at the printable width of an A4 page (what
  would be shrunk or cut off on paper), and the page printed to PDF with its page count;
* images that did not load, and every request that left the file: all are refused
  (the report must be one self-contained file), and listed;
* a PNG of the first screen, kept by the tests only when a check fails.

Chromium is started with the flags this closed network needs (no background connections)
and a new, empty profile folder, which is deleted afterwards.
"""
from __future__ import annotations

import base64
import json
import math
import os
import re
import select
import shutil
import subprocess
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--hide-scrollbars", "--remote-debugging-pipe")

# A4 paper and the margins used for printing [inch]; Chromium's own default margin is
# about 0.4 in (common practice, no source).
A4_INCH = (8.27, 11.69)
PRINT_MARGIN_INCH = 0.4
CSS_PX_PER_INCH = 96.0           # CSS 2.1: 1 in = 96 px (W3C CSS Values and Units)


def find_chromium() -> str | None:
    """Path of the Chromium executable (Debian package ``chromium``), or None if absent."""
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    return "/usr/bin/chromium" if os.access("/usr/bin/chromium", os.X_OK) else None


@dataclass(frozen=True)
class Overflow:
    """One element that sticks out of the page (or scrolls sideways inside itself).

    tag, ident: the element's tag and ``#id`` / ``.class`` text; left, right, width: its
    box [CSS px]; scroll_width: its scrollable content width [CSS px]; heading: its table
    caption, or else the last heading before it (to find it in the report).
    """
    tag: str
    ident: str
    left: float
    right: float
    width: float
    scroll_width: float
    heading: str

    def describe(self) -> str:
        return (f"<{self.tag}{self.ident}> under '{self.heading}': "
                f"box {self.left:.0f}..{self.right:.0f} px "
                f"(width {self.width:.0f} px, content {self.scroll_width:.0f} px)")


@dataclass(frozen=True)
class Placement:
    """Where the element named by a selector lies in the page [CSS px from the page top]."""
    selector: str
    found: bool
    top: float
    bottom: float


@dataclass(frozen=True)
class LayoutFacts:
    """What the browser measured in one rendering of one file.

    viewport_width, viewport_height, scroll_width: the screen layout [CSS px];
    too_wide: outermost elements whose box leaves the page (screen media);
    scrolls_sideways: elements whose content is wider than their box (a scrolling table);
    print_width: printable width of the paper [CSS px]; print_too_wide: outermost elements
    wider than that under print media; print_clipped: boxes whose content is wider than the
    box under print media (paper cannot scroll: the rest is cut off); placement: the
    element sought for the first screen; images: number of images; failed_images: ``src``
    (first 80 characters) of those that did not load;
    requests: every URL the page asked for outside the file itself (all were refused);
    pdf: the printed PDF; pdf_pages: its page count; screenshot: PNG of the first screen.
    """
    viewport_width: float
    viewport_height: float
    scroll_width: float
    too_wide: tuple[Overflow, ...]
    scrolls_sideways: tuple[Overflow, ...]
    print_width: float
    print_too_wide: tuple[Overflow, ...]
    print_clipped: tuple[Overflow, ...]
    placement: Placement
    images: int
    failed_images: tuple[str, ...]
    requests: tuple[str, ...]
    pdf: bytes
    pdf_pages: int
    screenshot: bytes

    @property
    def in_first_screen(self) -> bool:
        """The sought element is present and lies wholly within the first screen."""
        p = self.placement
        return p.found and p.top >= 0 and p.bottom <= self.viewport_height


# Runs in the page once it has loaded; returns the layout facts as a JSON-ready object.
_MEASURE = r"""
(async (selector) => {
  await Promise.all(Array.from(document.images, im => im.decode().catch(() => null)));
  if (document.fonts) { await document.fonts.ready; }
  window.scrollTo(0, 0);
  const page = document.documentElement.clientWidth;
  const ident = el => (el.id ? '#' + el.id : '') +
      (typeof el.className === 'string' && el.className.trim()
         ? '.' + el.className.trim().split(/\s+/).join('.') : '');
  const box = (el, r, heading) => ({tag: el.tagName.toLowerCase(), ident: ident(el),
      left: r.left, right: r.right, width: r.width, scroll_width: el.scrollWidth,
      heading: ((el.caption && el.caption.textContent) || heading).trim().slice(0, 60)});
  const tooWide = [], sideways = [], out = new Set();
  let heading = '';
  for (const el of document.body.querySelectorAll('*')) {
    if (/^H[1-4]$/.test(el.tagName)) heading = el.textContent;
    const r = el.getBoundingClientRect();
    if (r.width === 0 && r.height === 0) continue;
    const sticks = r.right > page + 0.5 || r.left < -0.5;
    if (sticks) {
      out.add(el);
      if (!out.has(el.parentElement)) tooWide.push(box(el, r, heading));
    }
    const st = getComputedStyle(el);
    if ((st.overflowX === 'auto' || st.overflowX === 'scroll' || st.overflowX === 'hidden' ||
         st.overflowX === 'clip') && el.scrollWidth > el.clientWidth + 1)
      sideways.push(box(el, r, heading));
  }
  const target = document.querySelector(selector);
  const tr = target ? target.getBoundingClientRect() : null;
  return {
    viewport_width: window.innerWidth, viewport_height: window.innerHeight,
    scroll_width: document.documentElement.scrollWidth,
    too_wide: tooWide, scrolls_sideways: sideways,
    placement: {selector: selector, found: !!target,
                top: tr ? tr.top + window.scrollY : NaN,
                bottom: tr ? tr.bottom + window.scrollY : NaN},
    images: document.images.length,
    failed_images: Array.from(document.images)
        .filter(im => !im.complete || im.naturalWidth === 0)
        .map(im => (im.getAttribute('src') || '').slice(0, 80)),
  };
})
"""


class BrowserError(RuntimeError):
    """Chromium did not start, answered with an error, or took too long."""


class _Pipe:
    """The DevTools protocol over the two pipes of one Chromium process."""

    def __init__(self, executable: str, profile: Path, width: int, height: int, timeout: float):
        to_browser_r, self._to_browser = os.pipe()
        self._from_browser, from_browser_w = os.pipe()

        # the browser reads fd 3 and writes fd 4; a shell moves the pipe ends there (no
        # preexec_fn: the tests call this from a thread, where preexec_fn is unsafe)
        r, w = to_browser_r, from_browser_w
        hr, hw = max(r, w) + 100, max(r, w) + 101    # parked above both, whatever r and w are
        script = f'exec "$0" "$@" {hr}<&{r} {hw}>&{w} 3<&{hr} 4>&{hw} {hr}<&- {hw}>&-'
        args = ["/bin/bash", "-c", script, executable, *FLAGS, f"--user-data-dir={profile}",
                f"--window-size={width},{height}", "about:blank"]
        self._log = tempfile.TemporaryFile()      # Chromium's messages (a pipe could fill up)
        self._proc = subprocess.Popen(args, pass_fds=(to_browser_r, from_browser_w),
                                      stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL,
                                      stderr=self._log)
        os.close(to_browser_r)
        os.close(from_browser_w)
        self._buffer = b""
        self._next_id = 0
        self._deadline = time.monotonic() + timeout
        self.events: list[dict] = []
        self.on_event = None

    def _read_message(self) -> dict:
        while b"\0" not in self._buffer:
            left = self._deadline - time.monotonic()
            if left <= 0:
                raise BrowserError("Chromium took too long to answer")
            ready, _, _ = select.select([self._from_browser], [], [], left)
            if not ready:
                continue
            chunk = os.read(self._from_browser, 1 << 20)
            if not chunk:
                self._proc.wait(timeout=10)
                self._log.seek(0)
                err = self._log.read().decode("utf-8", "replace")[-2000:]
                raise BrowserError(f"Chromium closed the pipe (exit status "
                                   f"{self._proc.returncode}): {err}")
            self._buffer += chunk
        text, self._buffer = self._buffer.split(b"\0", 1)
        return json.loads(text)

    def send(self, method: str, params: dict | None = None, session: str | None = None) -> int:
        self._next_id += 1
        message = {"id": self._next_id, "method": method, "params": params or {}}
        if session:
            message["sessionId"] = session
        os.write(self._to_browser, json.dumps(message).encode("utf-8") + b"\0")
        return self._next_id

    def call(self, method: str, params: dict | None = None, session: str | None = None) -> dict:
        """Send one command and return its result, handing events on to ``on_event``."""
        wanted = self.send(method, params, session)
        while True:
            message = self._read_message()
            if message.get("id") == wanted:
                if "error" in message:
                    raise BrowserError(f"{method}: {message['error']}")
                return message.get("result", {})
            self._event(message)

    def wait_for(self, method: str) -> dict:
        """Read messages until the event ``method`` arrives (or it came already)."""
        for event in self.events:
            if event.get("method") == method:
                return event
        while True:
            message = self._read_message()
            self._event(message)
            if message.get("method") == method:
                return message

    def _event(self, message: dict) -> None:
        if "method" in message:
            self.events.append(message)
            if self.on_event:
                self.on_event(message)

    def close(self) -> None:
        try:
            self.send("Browser.close")
            self._proc.wait(timeout=10)
        except (OSError, subprocess.TimeoutExpired):
            self._proc.kill()
            self._proc.wait()
        finally:
            os.close(self._to_browser)
            os.close(self._from_browser)
            self._log.close()


def _overflows(items) -> tuple[Overflow, ...]:
    return tuple(Overflow(i["tag"], i["ident"], float(i["left"]), float(i["right"]),
                          float(i["width"]), float(i["scroll_width"]), i["heading"])
                 for i in items)


def pdf_page_count(pdf: bytes) -> int:
    """Number of pages in a PDF: its ``/Type /Page`` objects (ISO 32000-1, 7.7.3.3), or the
    ``/Count`` of the page tree when the page objects sit in compressed streams."""
    pages = len(re.findall(rb"/Type\s*/Page(?![a-zA-Z])", pdf))
    if pages:
        return pages
    counts = [int(c) for c in re.findall(rb"/Count\s+(\d+)", pdf)]
    return max(counts, default=0)


def render(html_file: str | Path, *, width: int = 800, height: int = 1000,
           selector: str = "#design-basis", timeout: float = 60.0,
           executable: str | None = None) -> LayoutFacts:
    """Open ``html_file`` in headless Chromium at ``width`` x ``height`` [CSS px] and measure it.

    Every request other than the file itself is refused and recorded (``data:`` URLs are
    not requests).  Raises BrowserError if Chromium is missing, fails or exceeds ``timeout`` [s].
    """
    executable = executable or find_chromium()
    if not executable:
        raise BrowserError("Chromium is not installed (Debian package `chromium`)")
    url = Path(html_file).resolve().as_uri()
    profile = Path(tempfile.mkdtemp(prefix="eqdesign-chromium-"))
    pipe = _Pipe(executable, profile, width, height, timeout)
    try:
        return _measure(pipe, url, width, height, selector)
    finally:
        pipe.close()
        shutil.rmtree(profile, ignore_errors=True)


def _measure(pipe: _Pipe, url: str, width: int, height: int, selector: str) -> LayoutFacts:
    # sequential protocol conversation: open a page, load, measure, print; kept in one piece
    target = pipe.call("Target.createTarget", {"url": "about:blank"})["targetId"]
    session = pipe.call("Target.attachToTarget", {"targetId": target, "flatten": True})["sessionId"]
    requests: list[str] = []

    def refuse_outside_requests(event):
        if event.get("method") != "Fetch.requestPaused":
            return
        request_id, asked = event["params"]["requestId"], event["params"]["request"]["url"]
        if asked.split("#", 1)[0] == url:
            pipe.send("Fetch.continueRequest", {"requestId": request_id}, session)
        else:
            requests.append(asked)
            pipe.send("Fetch.failRequest", {"requestId": request_id,
                                            "errorReason": "BlockedByClient"}, session)

    pipe.on_event = refuse_outside_requests
    pipe.call("Fetch.enable", {"patterns": [{"urlPattern": "*"}]}, session)
    pipe.call("Page.enable", {}, session)
    pipe.call("Emulation.setDeviceMetricsOverride", {"width": width, "height": height,
                                                      "deviceScaleFactor": 1, "mobile": False},
              session)
    pipe.call("Page.navigate", {"url": url}, session)
    pipe.wait_for("Page.loadEventFired")
    screen = _evaluate(pipe, session, selector)
    shot = pipe.call("Page.captureScreenshot", {"format": "png"}, session)["data"]

    print_width = round((A4_INCH[0] - 2 * PRINT_MARGIN_INCH) * CSS_PX_PER_INCH)
    pipe.call("Emulation.setEmulatedMedia", {"media": "print"}, session)
    pipe.call("Emulation.setDeviceMetricsOverride", {"width": print_width, "height": height,
                                                      "deviceScaleFactor": 1, "mobile": False},
              session)
    printed = _evaluate(pipe, session, selector)
    pipe.call("Emulation.clearDeviceMetricsOverride", {}, session)
    pdf = base64.b64decode(pipe.call("Page.printToPDF", {
        "paperWidth": A4_INCH[0], "paperHeight": A4_INCH[1],
        "marginTop": PRINT_MARGIN_INCH, "marginBottom": PRINT_MARGIN_INCH,
        "marginLeft": PRINT_MARGIN_INCH, "marginRight": PRINT_MARGIN_INCH,
        "printBackground": True, "displayHeaderFooter": False}, session)["data"])
    p = screen["placement"]
    top, bottom = (float(p["top"]), float(p["bottom"])) if p["found"] else (math.nan, math.nan)
    return LayoutFacts(
        viewport_width=float(screen["viewport_width"]),
        viewport_height=float(screen["viewport_height"]),
        scroll_width=float(screen["scroll_width"]), too_wide=_overflows(screen["too_wide"]),
        scrolls_sideways=_overflows(screen["scrolls_sideways"]), print_width=float(print_width),
        print_too_wide=_overflows(printed["too_wide"]),
        print_clipped=_overflows(printed["scrolls_sideways"]),
        placement=Placement(p["selector"], bool(p["found"]), top, bottom),
        images=int(screen["images"]), failed_images=tuple(screen["failed_images"]),
        requests=tuple(requests), pdf=pdf, pdf_pages=pdf_page_count(pdf),
        screenshot=base64.b64decode(shot))


def _evaluate(pipe: _Pipe, session: str, selector: str) -> dict:
    answer = pipe.call("Runtime.evaluate", {"expression": f"{_MEASURE}({json.dumps(selector)})",
                                            "awaitPromise": True, "returnByValue": True}, session)
    if "exceptionDetails" in answer:
        raise BrowserError(f"measuring script failed: {answer['exceptionDetails']}")
    return answer["result"]["value"]
