"""Fast loading of the font that schematic text is outlined with.

schemdraw outlines text through ziafont, and ziafont, while it reads a font's
positioning (GPOS) and coverage tables, defines a new namedtuple class for
every anchor and pair record it meets: about 8000 class definitions for
DejaVu Sans, 1.5 s of CPU in every process that draws a schematic (each
worker of a build, and the main process of a one-stage rebuild). Those
classes are all alike (same name, same fields), so ``speed_up`` hands ziafont
one class per (name, fields), made once and reused. The records, the parsed
font and so every SVG byte stay the same (``tests/test_schematic.py``
compares the outlines with and without it in fresh processes).

schemdraw also outlines every label three times (its size and its descent
while the drawing is laid out, then once to draw it), each time placing every
glyph of the string anew (positioning tables, outline path text): about two
thirds of a schematic's drawing time. ``speed_up`` keeps each outlined string
per process, keyed by what the outline depends on (string, font, size, line
spacing, alignment), and hands out a copy of its group of glyph paths: the
same bytes, once per string (``tests/test_schematic_outlines.py``).

ziafont also reads every anchor of the font's mark attachment tables (GPOS
mark-to-base and mark-to-mark: some 7800 anchor records for DejaVu Sans, the
mark-to-mark ones read again for each mark, about half of the font's loading)
although an anchor is looked at only where a combining mark follows a glyph
its table covers, which a schematic's labels never have. With ziafont 0.11
``speed_up`` reads those tables' coverage as ziafont does and their anchors
on first use, with the same reads (the same records; the file position put
back), so a worker's first schematic costs about 0.04 s less
(``tests/test_schematic_outlines.py`` compares the positions of marked text
with ziafont's own reading).
"""

from __future__ import annotations

import collections
import copy
import functools

__all__ = ["speed_up"]

# ziafont's modules that define namedtuple classes while a font is read.
_READERS = ("ziafont.gpos", "ziafont.tables", "ziafont.font")


@functools.lru_cache(maxsize=None)
def _record_class(name: str, fields: tuple[str, ...]):
    return collections.namedtuple(name, fields)


def _namedtuple(typename, field_names, **options):
    # Anything but the plain (name, field list) form goes to the real factory.
    if options or not isinstance(field_names, (list, tuple)):
        return collections.namedtuple(typename, field_names, **options)
    return _record_class(typename, tuple(field_names))


def speed_up() -> None:
    """Point ziafont's font readers at the reusing factory and its text at the
    outline cache; call before a font loads. Idempotent; does nothing where
    ziafont is missing."""
    import importlib
    for name in _READERS:
        try:
            module = importlib.import_module(name)
        except ImportError:
            return
        if getattr(module, "namedtuple", None) is collections.namedtuple:
            module.namedtuple = _namedtuple
    _cache_outlines(importlib.import_module("ziafont.font"))
    from rcdoc.versions import folder_version
    if folder_version("ziafont") == _LAZY_MARKS_FOR:
        _lazy_mark_tables(importlib.import_module("ziafont.gpos"))


# The ziafont whose mark attachment subtables _lazy_mark_tables reads as they do.
_LAZY_MARKS_FOR = "0.11"


def _kept_position(fontfile, read):
    """``read()`` with the font file's position put back after it."""
    at = fontfile.tell()
    try:
        return read()
    finally:
        fontfile.seek(at)


def _coverages(gpos, table, ofst: int, fontfile) -> tuple:
    """The reads of ziafont's own mark-to-base and mark-to-mark subtables (their
    heads have the same layout: format, two coverage offsets, the mark class
    count, two array offsets), less the arrays: the two coverage tables; the
    arrays' place kept in ``table._arrays`` (class count, first, second)."""
    table.ofst = ofst
    table.fontfile = fontfile
    table.fmt = fontfile.readuint16(ofst)
    assert table.fmt == 1
    first, second = fontfile.readuint16(), fontfile.readuint16()
    table._arrays = (fontfile.readuint16(), fontfile.readuint16(), fontfile.readuint16())
    return gpos.Coverage(ofst + first, fontfile), gpos.Coverage(ofst + second, fontfile)


def _lazy_mark_tables(gpos) -> None:
    """Replace ziafont.gpos's mark-to-base and mark-to-mark subtables by ones that
    read their coverage at once and their anchors when first asked for."""
    if getattr(gpos.MarkToBaseSubtable, "_rcdoc_lazy", False):
        return

    def mark_array(table):
        # The marks' anchors, at the first array offset of either subtable.
        return _kept_position(table.fontfile, lambda: gpos.read_markarray_table(
            table.ofst + table._arrays[1], table.fontfile))

    class MarkToBase(gpos.MarkToBaseSubtable):
        _rcdoc_lazy = True

        def __init__(self, ofst, fontfile):
            self.markcoverage, self.basecoverage = _coverages(gpos, self, ofst, fontfile)

        markarray = functools.cached_property(mark_array)

        @functools.cached_property
        def basearray(self):
            markclasscnt, _, basearrayofst = self._arrays
            return _kept_position(self.fontfile, lambda: gpos.read_basearray(
                self.ofst + basearrayofst, self.fontfile, markclasscnt))

    class MarkToMark(gpos.MarkToMarkSubtable):
        _rcdoc_lazy = True

        def __init__(self, ofst, fontfile):
            self.mark1coverage, self.mark2coverage = _coverages(gpos, self, ofst, fontfile)

        mark1array = functools.cached_property(mark_array)

        @functools.cached_property
        def mark2array(self):
            return _kept_position(self.fontfile, self._read_mark2array)

        def _read_mark2array(self):
            # ziafont's loop (its reading of mark1array inside it aside).
            markclasscnt, _, mark2arrayofst = self._arrays
            fontfile = self.fontfile
            mark2count = fontfile.readuint16(self.ofst + mark2arrayofst)
            mark2array = []
            for _ in range(mark2count):
                anchorofsts = [fontfile.readuint16() for _ in range(markclasscnt)]
                ptr = fontfile.tell()
                mark2array.append([gpos.read_anchortable(self.ofst + mark2arrayofst + a, fontfile)
                                   for a in anchorofsts])
                fontfile.seek(ptr)
            return mark2array

    gpos.MarkToBaseSubtable = MarkToBase
    gpos.MarkToMarkSubtable = MarkToMark


# Outlined strings kept per process; a build draws a few hundred distinct labels.
_OUTLINES: dict = {}
_MAX_OUTLINES = 4096


def _cache_outlines(font_module) -> None:
    text_class = font_module.Text
    build = text_class._buildstring
    if getattr(build, "_rcdoc_cached", False):
        return

    def cached(self):
        # What _buildstring reads: the string, the font (one object per font file
        # and process) and its features, size, line spacing, alignment (where
        # lines are shifted), and ziafont's SVG 2 switch and number precision.
        config = font_module.config
        key = (self.str if isinstance(self.str, str) else tuple(self.str), id(self.font),
               tuple(sorted(self.font.features.items())), self.size, self.linespacing,
               self.halign, config.svg2, config.precision)
        hit = _OUTLINES.get(key)
        if hit is None or hit[0] is not self.font:
            if len(_OUTLINES) >= _MAX_OUTLINES:
                _OUTLINES.clear()
            hit = (self.font, _build_without_symbols(build, self, config.svg2))
            _OUTLINES[key] = hit
        # The group is placed into a drawing and given a transform and fill:
        # each caller gets its own copy.
        return hit[1]._replace(word=copy.deepcopy(hit[1].word),
                               symbols=[copy.deepcopy(s) for s in hit[1].symbols])

    cached._rcdoc_cached = True
    text_class._buildstring = cached


def _build_without_symbols(build, text, svg2: bool):
    """``build(text)``; in SVG 1.1 with each glyph's <symbol> element made bare.

    ziafont outlines every glyph of a string a second time as an SVG 2 <symbol>
    and, in SVG 1.1 (schematics), throws the symbols away: it reads only their
    ids (to list each glyph once). A third of the outlining went into them."""
    if svg2:
        return build(text)
    import xml.etree.ElementTree as ET
    from ziafont.glyph import SimpleGlyph
    full = SimpleGlyph.svgsymbol
    SimpleGlyph.svgsymbol = lambda glyph: ET.Element("symbol", {"id": glyph.id})
    try:
        return build(text)
    finally:
        SimpleGlyph.svgsymbol = full
