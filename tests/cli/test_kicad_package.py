"""The toolbar button: the plugin package built by ``python -m frontcheck.kicad_package`` and
its action, run as KiCad runs it.

The package is checked by KiCad's own packager (``kicad-python-packager validate`` from the
kicad-python package, which validates against KiCad's PCM and API plugin schemas) and against
the schemas KiCad 9 ships, where its Debian root is present. The action talks to a stand-in
for KiCad at the socket boundary only: an nng reply socket (the transport KiCad's API server
uses) answering kicad-python's protobuf requests the way KiCad's schematic editor does
(GetOpenDocuments with the open project's name and folder; other requests unhandled).
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import threading
import zipfile
import zlib
from pathlib import Path

import pytest

from conftest import REPO, REQUIRED, need

if REQUIRED:                 # in CI a missing test dependency fails (here: at collection)
    import kipy  # noqa: F401
    import pynng
else:
    kipy = pytest.importorskip("kipy", reason="kicad-python not installed "
                               "(pip install -e '.[test]')")
    pynng = pytest.importorskip("pynng")

from kipy.proto.common import (ApiRequest, ApiResponse, ApiStatusCode,  # noqa: E402
                               GetOpenDocuments, GetOpenDocumentsResponse)
from kipy.proto.common.types import DocumentType  # noqa: E402

from frontcheck import kicad_action, kicad_package  # noqa: E402
from kicad_root import kicad9_root  # noqa: E402

SAMPLES = REPO / "sample_projects"


@pytest.fixture(scope="module")
def package(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("pkg")
    res = subprocess.run([sys.executable, "-m", "frontcheck.kicad_package", str(out)],
                         capture_output=True, text=True, timeout=300)
    assert res.returncode == 0, res.stderr
    zip_path = Path(res.stdout.strip())
    assert zip_path == out / f"frontcheck-kicad-{kicad_package.pcm_version()}.zip"
    return zip_path


def test_kicads_packager_validates_the_package(package):
    exe = Path(sys.executable).parent / "kicad-python-packager"
    res = subprocess.run([str(exe), "validate", str(package)], capture_output=True, text=True,
                         timeout=300)
    assert res.returncode == 0 and "Validation passed." in res.stdout, res.stdout
    assert "[warning]" not in res.stdout and "[error]" not in res.stdout, res.stdout


def test_package_layout_and_metadata(package):
    with zipfile.ZipFile(package) as z:
        names = set(z.namelist())
        meta = json.loads(z.read("metadata.json"))
        plugin = json.loads(z.read("plugins/plugin.json"))
        reqs = z.read("plugins/requirements.txt").decode().split()
    assert meta["type"] == "plugin" and meta["versions"][0]["runtime"] == "ipc"
    assert meta["identifier"].count(".") >= 2 and meta["identifier"] == plugin["identifier"]
    assert plugin["runtime"]["type"] == "python"
    action = plugin["actions"][0]
    assert set(action["scopes"]) == {"schematic", "pcb"}
    for icon in action["icons-light"] + action["icons-dark"]:
        assert f"plugins/{icon}" in names
    assert f"plugins/{action['entrypoint']}" in names
    assert "plugins/frontcheck/kicad_action.py" in names
    # the rule profiles and part classes, where a wheel installs them
    assert {"plugins/frontcheck/rules/default.toml", "plugins/frontcheck/rules/strict.toml"} <= names
    assert any(n.startswith("plugins/frontcheck/rules/parts/") for n in names)
    assert not any("__pycache__" in n for n in names)
    assert any(r.startswith("kicad-python") for r in reqs) and any(r.startswith("numpy")
                                                                   for r in reqs)


def test_package_matches_the_schemas_kicad_9_ships(package):
    # KiCad 9's own copies of the schemas (its Debian root); jsonschema is a test dependency.
    import jsonschema
    schemas = kicad9_root() / "usr" / "share" / "kicad" / "schemas"
    need(schemas.is_dir(), f"KiCad 9's schemas not found at {schemas}")
    with zipfile.ZipFile(package) as z:
        meta = json.loads(z.read("metadata.json"))
        plugin = json.loads(z.read("plugins/plugin.json"))
    for doc, schema in ((meta, "pcm.v1.schema.json"), (plugin, "api.v1.schema.json")):
        jsonschema.Draft7Validator(json.loads((schemas / schema).read_text())).validate(doc)


def _png(data: bytes) -> tuple[int, int, list[bytes]]:
    """(width, height, rows of RGBA bytes) of a PNG written by kicad_package (one IDAT, no
    filter): read back independently with zlib, per the PNG specification's layout."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    width, height = int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")
    assert data[24:26] == b"\x08\x06"       # 8 bits, RGBA
    pos, idat = 8, b""
    while pos < len(data):
        n = int.from_bytes(data[pos:pos + 4], "big")
        kind, body = data[pos + 4:pos + 8], data[pos + 8:pos + 8 + n]
        assert zlib.crc32(kind + body) == int.from_bytes(data[pos + 8 + n:pos + 12 + n], "big")
        if kind == b"IDAT":
            idat += body
        pos += 12 + n
    raw = zlib.decompress(idat)
    stride = 1 + 4 * width
    return width, height, [raw[r * stride + 1:(r + 1) * stride] for r in range(height)]


def test_icons_are_drawn_for_both_themes(package):
    with zipfile.ZipFile(package) as z:
        plugin = json.loads(z.read("plugins/plugin.json"))
        action = plugin["actions"][0]
        for light, dark in zip(action["icons-light"], action["icons-dark"]):
            w, h, rows_l = _png(z.read(f"plugins/{light}"))
            w2, h2, rows_d = _png(z.read(f"plugins/{dark}"))
            assert (w, h) == (w2, h2) and w == h and w in (24, 48)
            alpha = [r[i + 3] for r in rows_l for i in range(0, len(r), 4)]
            opaque = sum(a > 200 for a in alpha)
            # strokes on a transparent field: neither empty nor filled
            assert 0.08 * w * h < opaque < 0.5 * w * h and alpha[0] == 0
            # the dark-theme icon is lighter where the light-theme one is drawn
            lum = [(sum(r[i:i + 3]), sum(d[i:i + 3])) for r, d in zip(rows_l, rows_d)
                   for i in range(0, len(r), 4) if r[i + 3] > 200]
            assert all(dl > ll for ll, dl in lum)


def test_package_is_reproducible(package, tmp_path):
    again = kicad_package.build(tmp_path)
    assert again.read_bytes() == package.read_bytes()


# -- the action, with KiCad stood in for at the socket ----------------------------------------

class FakeKiCad:
    """Answers kicad-python's requests on an nng reply socket like KiCad's schematic editor:
    GetOpenDocuments(schematic) gives the open project; anything else is unhandled."""

    def __init__(self, address: str, project: Path):
        self.project = project
        self.requests: list[str] = []
        self.sock = pynng.Rep0(listen=address, recv_timeout=200)
        self.stop = threading.Event()
        self.thread = threading.Thread(target=self._serve, daemon=True)
        self.thread.start()

    def _serve(self) -> None:
        while not self.stop.is_set():
            try:
                data = self.sock.recv()
            except pynng.Timeout:
                continue
            req = ApiRequest()
            req.ParseFromString(data)
            resp = ApiResponse()
            resp.header.kicad_token = "fake-kicad-token"
            cmd = GetOpenDocuments()
            if req.message.Unpack(cmd):
                self.requests.append(DocumentType.Name(cmd.type))
            if req.message.Is(GetOpenDocuments.DESCRIPTOR) and \
                    cmd.type == DocumentType.DOCTYPE_SCHEMATIC:
                reply = GetOpenDocumentsResponse()
                doc = reply.documents.add()
                doc.type = DocumentType.DOCTYPE_SCHEMATIC
                doc.project.name = self.project.name
                doc.project.path = str(self.project)
                resp.status.status = ApiStatusCode.AS_OK
                resp.message.Pack(reply)
            else:
                resp.status.status = ApiStatusCode.AS_UNHANDLED
                resp.status.error_message = "no handler for this request"
            self.sock.send(resp.SerializeToString())

    def close(self) -> None:
        self.stop.set()
        self.thread.join(timeout=5)
        self.sock.close()


@pytest.fixture
def kicad_socket(tmp_path, monkeypatch):
    """Start a stand-in KiCad for a project; the environment KiCad gives a plugin."""
    servers = []

    def start(project: Path) -> FakeKiCad:
        address = f"ipc://{tmp_path / 'api.sock'}"
        monkeypatch.setenv("KICAD_API_SOCKET", address)
        monkeypatch.setenv("KICAD_API_TOKEN", "")
        servers.append(FakeKiCad(address, project))
        return servers[-1]

    yield start
    for s in servers:
        s.close()


def _sample(tmp_path: Path, name: str) -> Path:
    proj = tmp_path / name
    shutil.copytree(SAMPLES / name, proj)
    return proj


class Recorder:
    def __init__(self, result=True):
        self.calls, self.result = [], result

    def __call__(self, *args):
        self.calls.append(args)
        return self.result


def test_action_checks_the_open_project_and_opens_the_report(tmp_path, kicad_socket, capsys):
    proj = _sample(tmp_path, "shunt-monitor")
    server = kicad_socket(proj)
    opener, notifier = Recorder(), Recorder()
    assert kicad_action.run(opener=opener, notifier=notifier, samples=200) == 1
    report = proj / "shunt-monitor-frontcheck.html"
    assert opener.calls == [(report,)] and notifier.calls == []
    assert "ratio-mismatch" in report.read_text()
    assert server.requests[0] == "DOCTYPE_SCHEMATIC"
    out = capsys.readouterr().out
    assert out.startswith("shunt-monitor: 1 stage(s) found") and "opened in your browser" in out


def test_action_warns_of_unsaved_changes(tmp_path, kicad_socket, capsys):
    proj = _sample(tmp_path, "bench-scale")
    kicad_socket(proj)
    # KiCad's autosave of unsaved edits, newer than the saved sheet
    auto = proj / "_autosave-bench-scale.kicad_sch"
    shutil.copy(proj / "bench-scale.kicad_sch", auto)
    saved = (proj / "bench-scale.kicad_sch").stat().st_mtime
    os.utime(auto, (saved + 60, saved + 60))
    opener, notifier = Recorder(), Recorder()
    assert kicad_action.run(opener=opener, notifier=notifier, samples=200) == 0
    assert opener.calls == [(proj / "bench-scale-frontcheck.html",)]
    [(title, text)] = notifier.calls
    assert "bench-scale.kicad_sch has unsaved changes" in text and "Save" in text
    # once saved (the sheet newer than its autosave) no warning
    os.utime(auto, (saved - 60, saved - 60))
    notifier2 = Recorder()
    assert kicad_action.run(opener=Recorder(), notifier=notifier2, samples=200) == 0
    assert notifier2.calls == []
    capsys.readouterr()


def test_action_says_when_kicads_api_server_is_off(tmp_path, monkeypatch):
    # nobody listens on the socket: KiCad's API server is off
    monkeypatch.setenv("KICAD_API_SOCKET", f"ipc://{tmp_path / 'nobody.sock'}")
    opener, notifier = Recorder(), Recorder()
    assert kicad_action.run(opener=opener, notifier=notifier) == 2
    [(title, text)] = notifier.calls
    assert "API server" in text and "Enable KiCad API" in text and opener.calls == []


def test_action_without_a_browser_shows_the_summary(tmp_path, kicad_socket, capsys):
    proj = _sample(tmp_path, "bench-scale")
    kicad_socket(proj)
    notifier = Recorder()
    assert kicad_action.run(opener=Recorder(result=False), notifier=notifier, samples=200) == 0
    [(title, text)] = notifier.calls
    assert "PASS at fail level 'error'" in text and "bench-scale-frontcheck.html" in text
    capsys.readouterr()


def test_entry_point_from_the_package_runs_as_kicad_starts_it(package, tmp_path, kicad_socket):
    # KiCad runs the entry point with the plugin environment's Python and the API socket in
    # the environment; the browser is kept closed here by FRONTCHECK_NO_OPEN=1.
    proj = _sample(tmp_path, "shunt-monitor")
    server = kicad_socket(proj)
    plugin = tmp_path / "installed"
    with zipfile.ZipFile(package) as z:
        z.extractall(plugin)
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    env["FRONTCHECK_NO_OPEN"] = "1"
    env["DISPLAY"] = ""          # no message box window in a test
    res = subprocess.run([sys.executable, "check_project.py"], cwd=plugin / "plugins",
                         capture_output=True, text=True, timeout=600, env=env)
    assert res.returncode == 1, res.stderr       # the sample's findings
    # it ran the package's own copy of frontcheck (profiles found inside it)
    probe = subprocess.run([sys.executable, "-c", "import frontcheck.profiles as p; "
                            "print(p.shipped_dir())"], cwd=plugin / "plugins", env=env,
                           capture_output=True, text=True, timeout=120)
    assert probe.stdout.strip() == str(plugin / "plugins" / "frontcheck" / "rules")
    assert "shunt-monitor: 1 stage(s) found" in res.stdout
    assert (proj / "shunt-monitor-frontcheck.html").is_file()
    assert "DOCTYPE_SCHEMATIC" in server.requests
