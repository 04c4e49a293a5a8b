"""HTML reports: self-contained, atomic, and right in a real browser.

The browser checks load each report in headless Chromium (Debian packages ``chromium`` and
``chromium-driver``), driven through the DevTools protocol over a pipe (``--remote-debugging-
pipe``: no network port, no Selenium). After the load event they read back, from the live page:
uncaught exceptions, console errors, failed or outside requests, every image's decoded size and
its size on the page, whether anything sticks out of the page sideways, and the visible text;
then they take a full-page screenshot and check it is a real picture.

Without Chromium these tests are skipped on a developer's machine and fail when ``CI`` is set.
``ZWITTER_CHROMIUM`` may name the binary.
"""

from __future__ import annotations

import base64
import json
import os
import re
import select
import shutil
import subprocess
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from typer.testing import CliRunner

import zwitter
from zwitter import report
from zwitter.cli import app
from zwitter.errors import ParameterError

runner = CliRunner()
TEST_DATA = Path(__file__).parent / "data"
PROTEINS = TEST_DATA / "batch_proteins.fasta"


# -- a small DevTools-protocol client ----------------------------------------------------------
def chromium_binary() -> str | None:
    named = os.environ.get("ZWITTER_CHROMIUM")
    if named:
        return shutil.which(named)  # a path or a name; None when it is not an executable
    for name in ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable"):
        found = shutil.which(name)
        if found:
            return found
    return None


PAGE_FACTS = r"""
(() => {
  const main = document.querySelector('main');
  const box = main.getBoundingClientRect();
  const images = [...document.images].map(i => {
    const r = i.getBoundingClientRect();
    return {complete: i.complete, naturalWidth: i.naturalWidth, naturalHeight: i.naturalHeight,
            width: r.width, height: r.height, src: i.currentSrc.slice(0, 22),
            figure: (i.closest('figure') || {dataset: {}}).dataset.figure || ''};
  });
  // anything wider than the page column (tables may scroll inside their own box)
  const sticking = [...main.querySelectorAll('*')].filter(e => {
    const r = e.getBoundingClientRect();
    return r.width > 0 && r.right > box.right + 1 && !e.closest('.scroll');
  }).map(e => e.tagName + (e.className ? '.' + e.className : '')).slice(0, 5);
  return JSON.stringify({
    ready: document.readyState, title: document.title, text: document.body.innerText,
    images: images, sticking: sticking,
    pageWidth: document.documentElement.scrollWidth,
    viewWidth: document.documentElement.clientWidth,
    keys: Object.fromEntries([...document.querySelectorAll('[data-key]')].map(
      k => [k.dataset.key, k.querySelector('dd').innerText])),
  });
})()
"""


class Chromium:
    """Headless Chromium, spoken to in DevTools-protocol messages over fds 3 and 4."""

    def __init__(self, binary: str, profile: Path, timeout: float = 60.0) -> None:
        self.timeout = timeout
        to_child, self._write = os.pipe()
        self._read, from_child = os.pipe()
        args = [
            binary, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
            "--no-first-run", "--no-default-browser-check", "--disable-background-networking",
            "--disable-component-update", "--disable-sync", "--disable-extensions",
            "--hide-scrollbars", "--mute-audio", f"--user-data-dir={profile}",
            "--disable-dev-shm-usage", "--remote-debugging-pipe", "--window-size=1200,2000",
            "about:blank",
        ]  # fmt: skip
        # The protocol pipe must be fds 3 (commands in) and 4 (answers out) in the browser; bash
        # moves them there and execs it, so no Python code runs between fork and exec (bash,
        # unlike dash, takes fd numbers above 9 in redirections).
        a, b = to_child, from_child
        command = f'exec "$0" "$@" 3<&{a} 4>&{b} {a}<&- {b}>&-'
        self.proc = subprocess.Popen(
            [shutil.which("bash") or "/bin/bash", "-c", command, *args],
            pass_fds=(to_child, from_child), stdin=subprocess.DEVNULL,
            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
        )  # fmt: skip
        os.close(to_child)
        os.close(from_child)
        self._buffer = b""
        self._id = 0
        self.session = ""
        self.events: list[dict[str, Any]] = []

    def call(self, method: str, params: dict[str, Any] | None = None, *, page: bool = True) -> Any:
        self._id += 1
        message: dict[str, Any] = {"id": self._id, "method": method, "params": params or {}}
        if page and self.session:
            message["sessionId"] = self.session
        try:
            os.write(self._write, json.dumps(message).encode() + b"\0")
        except BrokenPipeError:
            raise RuntimeError(f"Chromium exited (code {self.proc.poll()})") from None
        reply = self._until(lambda m: m.get("id") == self._id)
        if "error" in reply:
            raise RuntimeError(f"{method}: {reply['error']}")
        return reply.get("result", {})

    def _until(self, wanted: Any) -> dict[str, Any]:
        deadline = time.monotonic() + self.timeout
        while True:
            while b"\0" in self._buffer:
                raw, self._buffer = self._buffer.split(b"\0", 1)
                message = json.loads(raw)
                if wanted(message):
                    return message
                self.events.append(message)
            left = deadline - time.monotonic()
            if left <= 0:
                raise TimeoutError("Chromium did not answer within the timeout")
            if select.select([self._read], [], [], left)[0]:
                chunk = os.read(self._read, 1 << 20)
                if not chunk:
                    raise RuntimeError(f"Chromium closed the protocol pipe ({self.proc.poll()})")
                self._buffer += chunk

    def load(self, path: Path) -> dict[str, Any]:
        """Open ``path`` in a fresh tab; facts about the page after its load event."""
        if self.session:
            self.call("Target.closeTarget", {"targetId": self._target}, page=False)
        self._target = self.call("Target.createTarget", {"url": "about:blank"}, page=False)[
            "targetId"
        ]
        self.session = self.call(
            "Target.attachToTarget", {"targetId": self._target, "flatten": True}, page=False
        )["sessionId"]
        for domain in ("Page", "Runtime", "Log", "Network"):
            self.call(f"{domain}.enable")
        self.events = []
        nav = self.call("Page.navigate", {"url": path.resolve().as_uri()})
        assert not nav.get("errorText"), nav
        self._until(lambda m: m.get("method") == "Page.loadEventFired")
        result = self.call("Runtime.evaluate", {"expression": PAGE_FACTS, "returnByValue": True})
        assert "exceptionDetails" not in result, result
        return json.loads(result["result"]["value"])

    def problems(self) -> list[tuple[str, str]]:
        """Errors the page raised while loading: scripts, console, network, outside requests."""
        found = []
        for event in self.events:
            method, p = event.get("method"), event.get("params", {})
            if method == "Runtime.exceptionThrown":
                found.append(("exception", p["exceptionDetails"].get("text", "")))
            elif method == "Runtime.consoleAPICalled" and p.get("type") in ("error", "assert"):
                found.append(("console", json.dumps(p.get("args"))[:200]))
            elif method == "Log.entryAdded" and p["entry"]["level"] == "error":
                found.append(("log", p["entry"].get("text", "")))
            elif method == "Network.loadingFailed":
                found.append(("network", p.get("errorText", "")))
            elif method == "Network.requestWillBeSent":
                url = p["request"]["url"]
                if not url.startswith(("file:", "data:", "about:")):
                    found.append(("outside request", url))
        return found

    def screenshot(self, path: Path) -> bytes:
        shot = self.call("Page.captureScreenshot", {"format": "png", "captureBeyondViewport": True})
        data = base64.b64decode(shot["data"])
        path.write_bytes(data)
        return data

    def close(self) -> None:
        try:
            self.call("Browser.close", page=False)
        except (RuntimeError, TimeoutError, OSError):
            pass
        try:
            self.proc.wait(timeout=15)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait()
        for fd in (self._write, self._read):
            try:
                os.close(fd)
            except OSError:
                pass


@pytest.fixture(scope="module")
def browser(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Chromium]:
    binary = chromium_binary()
    if binary is None:
        wanted = os.environ.get("ZWITTER_CHROMIUM") or "chromium"
        if os.environ.get("CI"):
            pytest.fail(f"{wanted!r} not found: CI must install Chromium (apt-get install "
                        "chromium chromium-driver)")  # fmt: skip
        pytest.skip(f"{wanted!r} not found (apt-get install chromium chromium-driver)")
    chrome = Chromium(binary, tmp_path_factory.mktemp("chromium-profile"))
    try:
        yield chrome
    finally:
        chrome.close()


def check_page(browser: Chromium, page: Path, figures: set[str]) -> dict[str, Any]:
    """Load ``page``; assert it rendered cleanly with the named figures; return its facts."""
    facts = browser.load(page)
    assert facts["ready"] == "complete"
    assert browser.problems() == []
    shown = {img["figure"] for img in facts["images"]}
    assert shown == figures
    for img in facts["images"]:
        assert img["complete"], img
        assert img["naturalWidth"] > 500 and img["naturalHeight"] > 300, img  # decoded
        assert img["width"] > 500 and img["height"] > 300, img  # and laid out at a useful size
        ratio = img["naturalWidth"] / img["naturalHeight"]
        assert img["width"] / img["height"] == pytest.approx(ratio, rel=0.02), img  # not squashed
    assert facts["sticking"] == []
    assert facts["pageWidth"] <= facts["viewWidth"]  # no sideways scrolling
    assert "verify experimentally" in facts["text"]
    assert "safety rules and local regulations" in facts["text"]
    shot = browser.screenshot(page.with_suffix(".png"))
    assert_real_screenshot(shot)
    return facts


def assert_real_screenshot(data: bytes) -> None:
    import io

    from PIL import Image  # Pillow comes with matplotlib

    assert data.startswith(b"\x89PNG")
    image = Image.open(io.BytesIO(data)).convert("RGB")
    width, height = image.size
    assert width == 1200 and height > 1500
    colours = image.resize((300, height // 4)).getcolors(maxcolors=1 << 16)
    assert colours is None or len(colours) > 200  # figures and text, not a blank page


# -- reports in the browser ------------------------------------------------------------------
def test_molecule_report_in_the_browser(browser: Chromium, tmp_path: Path) -> None:
    page = tmp_path / "peptide.html"
    res = runner.invoke(app, ["report", "DKHKEGLSDGEWQQ", "-o", str(page), "--ph", "7.4",
                              "--scale", "lehninger"])  # fmt: skip
    assert res.exit_code == 0, res.output
    m = zwitter.from_sequence("DKHKEGLSDGEWQQ", scale="lehninger")
    facts = check_page(browser, page, {"charge", "titration", "species"})
    assert facts["keys"]["pI"].startswith(f"{m.isoelectric_point():.2f}")
    assert f"{m.isoelectric_point():.2f}" in facts["text"]
    assert facts["keys"]["charge@7.4"].replace("−", "-").startswith(f"{m.charge(7.4):+.2f}")
    assert "Nelson & Cox" in facts["text"]  # the Lehninger scale's pKa source
    assert facts["title"].startswith("DKHKEGLSDGEWQQ")


def test_molecule_report_pi_matches_biopython(browser: Chromium, tmp_path: Path) -> None:
    # tests/data/biopython_scale.csv carries Biopython's own pK set: the pI on the page agrees
    # with Biopython's isoelectric point to its search precision.
    protparam = pytest.importorskip("Bio.SeqUtils.ProtParam")
    seq = "MKWVTFISLLFLFSSAYSRGVFRRDTHKSEIAHRFKDLGE"
    page = tmp_path / "bio.html"
    scale = zwitter.load_scale_file(TEST_DATA / "biopython_scale.csv")
    report.write_report(zwitter.from_sequence(seq, scale=scale), page, figure_format="svg")
    facts = check_page(browser, page, {"charge", "titration", "species"})
    shown = float(facts["keys"]["pI"].split()[0])
    theirs = protparam.ProteinAnalysis(seq).isoelectric_point()
    assert shown == pytest.approx(theirs, abs=0.011)


def test_plan_report_in_the_browser(browser: Chromium, tmp_path: Path) -> None:
    from zwitter.purification import plan_ion_exchange

    target = "GLSDGEWQQVLNVWGKVEADIPGHGQEVLIRLFKGHPETLEKFDKFKHLK"
    page = tmp_path / "plan.html"
    res = runner.invoke(app, ["report", target, "--plan", "-c", "DDDDEEEEKKAAGG", "-c",
                              "KKKRRRHHGGAA", "--scale", "lehninger", "-o", str(page)])  # fmt: skip
    assert res.exit_code == 0, res.output
    plan = plan_ion_exchange(target, ["DDDDEEEEKKAAGG", "KKKRRRHHGGAA"], scale="lehninger")
    facts = check_page(browser, page, {"plan"})
    assert facts["keys"]["pI"].startswith(f"{plan.pi:.2f}")
    assert facts["keys"]["exchanger"].startswith(plan.exchanger)
    assert facts["keys"]["working_ph"] == f"{plan.working_ph:.2f}"
    assert "pilot run" in facts["text"]
    for buffer in plan.buffers["buffer"].head(3):
        assert buffer in facts["text"]


def test_batch_report_in_the_browser(browser: Chromium, tmp_path: Path) -> None:
    from zwitter.batch import score_fasta

    page = tmp_path / "batch.html"
    res = runner.invoke(app, ["report", str(PROTEINS), "-o", str(page), "--fractions",
                              "4,5,6,7,8,9,10,11", "--highlight", "melittin"])  # fmt: skip
    assert res.exit_code == 0, res.output
    frame = score_fasta(PROTEINS)
    facts = check_page(browser, page, {"gel", "histogram"})
    assert facts["keys"]["records"] == f"{len(frame):,}"
    for pi in frame["pI"].dropna():
        assert f"{pi:.2f}" in facts["text"]
    assert "Isoelectric-focusing fractions" in facts["text"]


def test_the_checker_catches_a_broken_page(browser: Chromium, tmp_path: Path) -> None:
    # A check that cannot fail proves nothing: a page with a broken image, a script error and
    # an outside request must be caught.
    page = tmp_path / "broken.html"
    page.write_text(
        "<!doctype html><html><body><main><p>x</p>"
        '<figure data-figure="charge"><img src="data:image/png;base64,iVBORw0KGgoAAAA"></figure>'
        '<img src="missing.png"><script>undefinedFunction()</script></main></body></html>',
        encoding="utf-8",
    )
    facts = browser.load(page)
    kinds = {kind for kind, _ in browser.problems()}
    assert "exception" in kinds and "network" in kinds
    assert [img["naturalWidth"] for img in facts["images"]] == [0, 0]


# -- files -------------------------------------------------------------------------------------
def test_report_is_self_contained(tmp_path: Path) -> None:
    page = report.write_report(zwitter.from_sequence("DKHKE"), tmp_path / "r.html")
    text = page.read_text(encoding="utf-8")
    assert text.startswith("<!doctype html>")
    assert "<script" not in text and "<link" not in text and "@import" not in text
    assert not re.search(r"""(src|href)\s*=\s*["'](?!data:)""", text)  # only inline data
    assert len(re.findall(r'src="data:image/png;base64,', text)) == 3


def test_names_are_escaped(tmp_path: Path) -> None:
    m = zwitter.from_sequence("DKHKE", name='<img src=x onerror="alert(1)">')
    text = report.molecule_report(m)
    assert '<img src=x onerror="alert(1)">' not in text
    assert "&lt;img src=x onerror=&quot;alert(1)&quot;&gt;" in text


def test_write_is_atomic(tmp_path: Path) -> None:
    target = tmp_path / "r.html"
    target.write_text("old", encoding="utf-8")
    with pytest.raises(ParameterError):
        report.write_report(42, target)
    assert target.read_text(encoding="utf-8") == "old"
    report.write_report(zwitter.from_sequence("DK"), target)
    assert target.read_text(encoding="utf-8").startswith("<!doctype html>")
    assert [p.name for p in tmp_path.iterdir()] == ["r.html"]
    assert target.stat().st_mode & 0o044  # readable by others, like any document


@pytest.mark.parametrize(
    ("call", "message"),
    [
        (lambda: report.render_report(42), "The 'obj' parameter of render_report must be a "
         "Molecule, a purification Plan or a batch DataFrame. Got <int> instead."),
        (lambda: report.molecule_report(zwitter.from_sequence("DK"), figure_format="gif"),
         "The 'figure_format' parameter of molecule_report must be 'png' or 'svg'. "
         "Got 'gif' instead."),
        (lambda: report.molecule_report(zwitter.from_sequence("DK"), ph=[]),
         "The 'ph' parameter of molecule_report must be at least one pH value. Got [] instead."),
        (lambda: report.molecule_report(zwitter.from_sequence("DK"), ph=[20]),
         "The 'ph' parameter of molecule_report must be a number in [-2, 16]. Got 20.0 instead."),
        (lambda: report.write_html("x", "/no/such/folder/r.html"),
         "The 'path' parameter of write_report must be a file in an existing folder. "
         "Got '/no/such/folder/r.html' instead."),
    ],
)  # fmt: skip
def test_bad_arguments(call, message: str) -> None:
    with pytest.raises(ParameterError) as err:
        call()
    assert str(err.value) == message


def test_batch_report_from_a_frame_names_scale_sources() -> None:
    from zwitter.batch import score_fasta

    frame = score_fasta(PROTEINS, ph=[5.0, 7.4], scale="lehninger")
    text = report.batch_report(frame, source="batch_proteins.fasta", scale="lehninger",
                               max_rows=3)  # fmt: skip
    assert f"first 3 of {len(frame):,}" in text
    assert "Nelson &amp; Cox" in text
    assert "charge at pH 7.4 (e)" in text


# -- the command's input handling ----------------------------------------------------------
@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["missing.fasta"], "zwitter: error: input file 'missing.fasta' not found"),
        (["DKHK", "--fractions", "4,5"], "zwitter: error: --fractions and --highlight apply to "
         "a batch file INPUT"),
        ([str(PROTEINS), "--plan"], "zwitter: error: --plan and its options need a target "
         "molecule as INPUT, not a batch file"),
        (["DKHK", "-c", "KKK"], "zwitter: error: --contaminant, --contaminants, --stability and "
         "--threshold need --plan"),
        (["DKHK", "--temp", "120"], "zwitter: error: The 'temperature' condition must be degrees "
         "Celsius in [0, 100] (liquid water). Got 120.0 instead."),
    ],
)  # fmt: skip
def test_command_refuses_bad_input(tmp_path: Path, args: list[str], message: str) -> None:
    res = runner.invoke(app, ["report", *args, "-o", str(tmp_path / "r.html")])
    assert res.exit_code == 2
    assert message in res.output
    assert not (tmp_path / "r.html").exists()


def test_command_needs_an_html_name(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    res = runner.invoke(app, ["report", "DKHK", "-o", "r.txt"])
    assert res.exit_code == 2
    assert "'r.txt' must end in .html" in res.output
    assert list(tmp_path.iterdir()) == []


def test_report_of_a_long_sequence_argument(tmp_path: Path) -> None:
    # a protein pasted as INPUT is far longer than a file name may be: it is molecule text
    from typer.testing import CliRunner

    from zwitter.cli import app

    seq = "MKWVTFISLLFLFSSAYSRGVFRRDAHKSEVAHRFKDLGEENFKALVLIAFAQYLQQCPFEDHVKLVNEVTEFAK" * 5
    out = tmp_path / "long.html"
    res = CliRunner().invoke(app, ["report", seq, "-o", str(out)])
    assert res.exit_code == 0, res.output
    assert out.stat().st_size > 10_000


def test_salt_on_whole_forms_is_said_beside_the_corrections() -> None:
    # A structure takes the ionic strength on its whole forms: the per-site table shows no salt
    # shift and says where the salt went; a sequence shows its per-site Davies shifts.
    salt = zwitter.Conditions(ionic_strength=0.1)
    glycine = report.molecule_report(zwitter.from_smiles("NCC(=O)O", conditions=salt))
    assert "The ionic strength acts on whole forms" in glycine
    peptide = report.molecule_report(zwitter.from_sequence("DKHKE", conditions=salt))
    assert "pKa corrections for these conditions" in peptide
    assert "The ionic strength acts on whole forms" not in peptide
