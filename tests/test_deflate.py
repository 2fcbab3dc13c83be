"""The page streams of a part are deflated at level 4 instead of pydyf's 9
(rcdoc.note.deflate.LEVEL), and nothing else changes: every stream of a
rendered part, decompressed, is byte for byte the one written at pydyf's own
level. The reference for the compressed bytes is Python's zlib module itself
(RFC 1950/1951 streams at the stated level)."""

from __future__ import annotations

import io
import zlib

import pikepdf
import pydyf
import pytest

from rcdoc.note import assemble, deflate
from test_report import EPOCH, make_context


@pytest.fixture()
def own_level():
    """pydyf's own zlib for the test; the stand-in back after it."""
    was = deflate.installed()
    deflate.uninstall()
    yield
    if was:
        deflate.install()


def _streams(pdf: bytes) -> list[tuple[str, bytes]]:
    """Every stream's decoded bytes (images: their raw data, as stored), but the
    cross-reference and object streams: they hold the offsets and the lengths,
    which the level moves."""
    out = []
    with pikepdf.open(io.BytesIO(pdf)) as doc:
        for obj in doc.objects:
            if isinstance(obj, pikepdf.Stream):
                kind = str(obj.get("/Subtype", obj.get("/Type", "")))
                if kind in ("/XRef", "/ObjStm"):
                    continue
                data = (obj.read_raw_bytes() if kind == "/Image" else obj.read_bytes())
                out.append((kind, data))
    return out


def test_a_stream_is_written_at_level_4_and_reads_back_the_same(own_level):
    text = b"\n".join(b"BT /F1 8 Tf 1 0 0 -1 %d 700 Tm <0041004200430044> Tj ET" % i
                      for i in range(400))
    stream = pydyf.Stream([text], compress=True)
    at_9 = stream.data
    deflate.install()
    at_4 = stream.data
    assert deflate.installed()
    assert at_4 != at_9
    body = lambda data: data.split(b"\nstream\n", 1)[1].rsplit(b"\nendstream", 1)[0]  # noqa: E731
    assert deflate.LEVEL == 4
    assert body(at_4) == zlib.compress(text, 4)
    assert body(at_9) == zlib.compress(text, 9)
    assert zlib.decompress(body(at_4)) == zlib.decompress(body(at_9)) == text
    # Any other level asked, and zlib's other functions, are zlib's own.
    assert pydyf.zlib.compressobj(level=1).compress(text) == zlib.compressobj(1).compress(text)
    assert pydyf.zlib.compress is zlib.compress and pydyf.zlib.crc32 is zlib.crc32


def test_install_is_idempotent_and_undone(own_level):
    deflate.install()
    deflate.install()
    assert pydyf.zlib is not zlib and deflate.installed()
    deflate.uninstall()
    assert pydyf.zlib is zlib and not deflate.installed()


@pytest.mark.slow
def test_a_part_holds_the_same_streams_at_either_level(own_level, monkeypatch):
    ctx = make_context()
    part = {**assemble._head(ctx), "stages": ctx["stages"]}
    # render_part installs the stand-in; here it is asked not to, for the reference.
    install = deflate.install
    monkeypatch.setattr(deflate, "install", lambda: None)
    reference = assemble.render_part(part, "stage", source_date_epoch=EPOCH)
    assert not deflate.installed()
    monkeypatch.setattr(deflate, "install", install)
    ours = assemble.render_part(part, "stage", source_date_epoch=EPOCH)
    assert deflate.installed()
    assert ours["pages"] == reference["pages"] >= 1
    assert ours["pdf"] != reference["pdf"]
    streams = _streams(ours["pdf"])
    assert len(streams) > 5 and streams == _streams(reference["pdf"])
