"""A shorter path through weasyprint 70's cascade (``css.StyleFor.__init__``):
selector matching kept per element signature, giving the same cascaded and
computed styles, so the same PDF.

What it is for: for every element of a document weasyprint asks each sheet's
cssselect2 ``Matcher`` for the selectors that match (every candidate's
compiled test run, the matches sorted), then writes their declarations into
the element's cascaded styles one by one. The note's parts hold some 4 300
elements, mostly table cells and rows of a few kinds under the same
ancestors, and ask the same questions again and again.

Here, for the document being styled:

- An element's *signature* is its tag, those of its attributes the kept
  tests and the choice of candidates can depend on (class, lang, id where a
  sheet has id selectors, and every attribute name a kept test's code holds
  as a constant: cssselect2 writes the names it reads so; an element's
  ``style``, ``src`` or ``data-*`` are left out unless a selector names
  them), and its parent's signature. Of a sheet's compiled tests, those that
  read nothing but the element and its ancestors' own tags and attributes
  (and what cssselect2 derives from them: local name, namespace, id,
  classes, language; and the document's constants) answer the same for two
  elements of one signature: they are run once per signature and their
  matches kept. The others (sibling combinators, ``:nth-*``,
  ``:first-child``, ``:last-child``, ``:only-*``, ``:empty``, ``:has()``,
  ``:enabled``...) are run for every element, as cssselect2 runs them, and
  their matches merged in cssselect2's order (by specificity, then the order
  of the rules; no two selectors of one sheet share an order).
- Which tests are kept is read from the compiled test itself, the code
  cssselect2 generates (``compiler.CompiledSelector``: ``lambda el: ...``,
  the parsed selector is not kept): a test may be kept when every name its
  code reads, nested generator expressions included, is one of
  ``_KEPT_READS``. Reading the code that decides rather than the selector's
  text leaves nothing to interpret: a name not listed sends the test the
  general way. The parting is kept per ``Matcher`` (weakly: a sheet
  collected takes its parting with it) and made again when the matcher has
  had selectors added.
- An element with no declarations of its own (no ``style`` attribute, no
  presentational hint, no ``lang`` or ``id``: those go into its cascaded
  style first, as weasyprint does) is given copies of the cascaded
  declarations written for the first element of its signature that matched
  the same selectors: the same entries in the same order, in dictionaries of
  its own (weasyprint writes into none of them later, but each element's
  stays its own). Others have them written as weasyprint writes them.

Everything else is weasyprint's own code, in its order: the style
attributes, the computed styles shared through ``computed_cache`` by the same
key (so the same styles are shared), ``set_computed_styles`` called for the
same elements in the same order, the pseudo-elements after them. The kept
matches live in the one ``__init__`` call: nothing is carried from one
document to the next (a signature leaves out the document's constants).

Measured on the example board's note (15 parts, 4 293 elements: 641
signatures, 3 139 elements given copies; interleaved, best of 9 to 11):
``get_all_computed_styles`` 100-122 ms of CPU instead of 139-182 ms (its
``StyleFor.__init__`` 82-100 ms instead of 121-159), the render 1.41-1.82 s
instead of 1.48-1.89 s; cachegrind, one render: 11.09 G instructions instead
of 11.60 G (4.4 % fewer). What is left is mostly the general tests (the
note's ``.stage > :last-child`` is run for every element, its striped rows'
``:nth-child`` and ``:last-child`` for every cell) and weasyprint's own steps.

What it must not do: change a value. ``replacements`` gives nothing for
another weasyprint than 70.0 or another cssselect2 than 0.10.1 (the names
read by its compiled tests are what this relies on), and a document with a
sheet whose matcher is not cssselect2's goes the general way.
tests/test_fast_cascade.py compares every computed property, the sharing of
styles, the log records and the PDFs with weasyprint's own.
"""

from __future__ import annotations

import collections
import types
import weakref
from math import inf

from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
import cssselect2  # noqa: E402
import weasyprint  # noqa: E402 - after renderer_libs
from webencodings import ascii_lower  # noqa: E402 - cssselect2's own lowering

__all__ = ["replacements", "kept_test", "counts"]

_VERSION = "70.0"
_SELECTORS_VERSION = "0.10.1"

# The names a kept test may read. Of an element (or of an ancestor reached
# through parent/ancestors): its tag and attributes and what cssselect2 makes
# of them; in_html_document is the document's, lang goes up to the root and
# then to the document's content language. The rest read nothing of a tree:
# string methods, urlparse(...).scheme of an attribute, cssselect2's helpers,
# any() over the ancestors, next() over [el.parent].
_KEPT_READS = frozenset({
    "etree_element", "attrib", "get", "tag", "local_name", "namespace_url", "classes",
    "id", "lang", "in_html_document", "parent", "ancestors",
    "lower", "startswith", "endswith", "scheme",
    "split_whitespace", "ascii_lower", "urlparse", "any", "next"})
# The globals cssselect2's compiler evaluates its tests with (eval adds __builtins__).
_COMPILER_GLOBALS = frozenset({"split_whitespace", "ascii_lower", "urlparse", "__builtins__"})
_XML_LANG = "{http://www.w3.org/XML/1998/namespace}lang"     # read by ElementWrapper.lang

# Elements styled, signatures met (tests run once each), tests run per element
# (the general ones), cascaded styles copied rather than written: for the tests.
counts: collections.Counter = collections.Counter()

_PARTINGS: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()   # Matcher -> _Parting


def replacements() -> list:
    """(owner, name, function) for the short path, in the shape of
    rcdoc.note.fast_layout's; empty for another weasyprint or cssselect2 than
    the ones it was written for."""
    if weasyprint.__version__ != _VERSION or cssselect2.__version__ != _SELECTORS_VERSION:
        return []
    from weasyprint import css
    own = css.StyleFor.__dict__["__init__"]
    return [(css.StyleFor, "__init__", _style_for_init(css, getattr(own, "_rcdoc_own", own)))]


def kept_test(test) -> bool:
    """Whether a compiled selector test answers from the element's and its
    ancestors' own tags and attributes alone (so per signature)."""
    code = getattr(test, "__code__", None)
    if (code is None or getattr(test, "__closure__", None) or getattr(test, "__defaults__", None)
            or not set(test.__globals__) <= _COMPILER_GLOBALS):
        return False
    return _reads(code) <= _KEPT_READS


def _strings(code) -> set:
    """Every string constant of a code object (folded into tuples too), its
    nested generator expressions' too: the attribute names it may read."""
    found = set()
    for constant in code.co_consts:
        if isinstance(constant, str):
            found.add(constant)
        elif isinstance(constant, (tuple, frozenset)):
            found.update(item for item in constant if isinstance(item, str))
        elif isinstance(constant, types.CodeType):
            found |= _strings(constant)
    return found


def _reads(code) -> set:
    """Every name a code object reads (attributes, globals), its nested
    generator expressions' too."""
    names = set(code.co_names)
    for constant in code.co_consts:
        if isinstance(constant, types.CodeType):
            names |= _reads(constant)
    return names


class _Parting:
    """A Matcher's buckets (cssselect2's: by id, class, lower local name,
    namespace, lang attribute, any other), each parted into (kept entries,
    general entries), in the matcher's order."""

    def __init__(self, matcher):
        self.order = matcher.order      # add_selector counts every selector it is given

        def part(entries):
            which = [kept_test(entry[0]) for entry in entries]
            return (tuple(entry for entry, kept in zip(entries, which) if kept),
                    tuple(entry for entry, kept in zip(entries, which) if not kept))

        self.ids = {key: part(entries) for key, entries in matcher.id_selectors.items()}
        self.classes = {key: part(entries) for key, entries in matcher.class_selectors.items()}
        self.names = {key: part(entries)
                      for key, entries in matcher.lower_local_name_selectors.items()}
        self.namespaces = {key: part(entries)
                           for key, entries in matcher.namespace_selectors.items()}
        self.lang = part(matcher.lang_attr_selectors)
        self.other = part(matcher.other_selectors)
        self.attributes = self._attributes()

    def _attributes(self) -> frozenset:
        """The attributes an element's kept matches depend on: those the
        buckets are chosen by (id, class, lang), the language's, and those its
        kept tests read by name (cssselect2 writes each name as a constant)."""
        names = {"class", "lang", _XML_LANG}
        for table in (self.ids, self.classes, self.names, self.namespaces):
            for kept, _ in table.values():
                names.update(*(self._read_by(entry[0]) for entry in kept))
        for kept, _ in (self.lang, self.other):
            names.update(*(self._read_by(entry[0]) for entry in kept))
        if self.ids:
            names.add("id")
        return frozenset(names)

    @staticmethod
    def _read_by(test) -> set:
        reads = _reads(test.__code__)
        names = _strings(test.__code__) if reads & {"get", "attrib"} else set()
        return names | ({"id"} if "id" in reads else set())

    def buckets(self, element) -> list:
        """The buckets Matcher.match draws its candidates from for the element."""
        found = []
        if element.id is not None and element.id in self.ids:
            found.append(self.ids[element.id])
        found.extend(self.classes[name] for name in element.classes if name in self.classes)
        lower_name = ascii_lower(element.local_name)
        if lower_name in self.names:
            found.append(self.names[lower_name])
        if element.namespace_url in self.namespaces:
            found.append(self.namespaces[element.namespace_url])
        if "lang" in element.etree_element.attrib:
            found.append(self.lang)
        found.append(self.other)
        return found


def _parting(matcher) -> _Parting:
    parting = _PARTINGS.get(matcher)
    if parting is None or parting.order != matcher.order:
        parting = _PARTINGS[matcher] = _Parting(matcher)
    return parting


class _Signature:
    """What one signature's elements share: per sheet the kept tests' matches
    (sorted as Matcher.match sorts), the general entries still to run (by
    sheet), and the cascaded styles written, per outcome of those."""
    __slots__ = ("kept", "general", "tests", "written")

    def __init__(self, partings, element):
        kept, general = [], []
        for index, parting in enumerate(partings):
            matches, rest = [], []
            for bucket_kept, bucket_rest in parting.buckets(element):
                matches.extend((specificity, order, pseudo, payload)
                               for test, specificity, order, pseudo, payload in bucket_kept
                               if test(element))
                rest.extend(bucket_rest)
            matches.sort()
            kept.append(matches)
            if rest:
                general.append((index, tuple(rest)))
        self.kept = tuple(kept)
        self.general = tuple(general)
        self.tests = sum(len(rest) for _, rest in general)
        self.written = {}


class _Cascade:
    """The matching and writing of cascaded declarations for one document."""

    def __init__(self, css, sheets, cascaded_styles):
        self.sheets = sheets
        self.partings = [_parting(sheet.matcher) for sheet, _, _ in sheets]
        self.cascaded = cascaded_styles
        self.precedence = css.declaration_precedence
        self.attributes = frozenset().union(*(parting.attributes for parting in self.partings))
        self.signatures = {}        # (parent's _Signature, tag, attributes) -> _Signature
        self.of_element = {}        # etree element -> its _Signature
        self.general_tests = self.copied = 0

    def apply(self, element, etree_element, parent) -> tuple:
        """Write the element's cascaded declarations; the selectors' keys
        weasyprint shares computed styles by."""
        attributes = etree_element.attrib
        if attributes.keys() <= self.attributes:
            attributes = tuple(attributes.items())
        else:
            attributes = tuple(item for item in attributes.items() if item[0] in self.attributes)
        key = (self.of_element.get(parent), etree_element.tag, attributes)
        signature = self.signatures.get(key)
        if signature is None:
            signature = self.signatures[key] = _Signature(self.partings, element)
        self.of_element[etree_element] = signature
        matched, outcome = signature.kept, ()
        if signature.general:
            matched = list(matched)
            for index, general in signature.general:
                found = [(specificity, order, pseudo, payload)
                         for test, specificity, order, pseudo, payload in general
                         if test(element)]
                if found:
                    outcome += ((index, tuple(entry[1] for entry in found)),)
                    matched[index] = sorted(matched[index] + found)
            self.general_tests += signature.tests
        if (etree_element, None) in self.cascaded:
            # Declarations of its own (style attribute, hints) came first.
            return self.write(etree_element, matched)
        written = signature.written.get(outcome)
        if written is None:
            keys = self.write(etree_element, matched)
            pseudos = dict.fromkeys(entry[2] for selectors in matched for entry in selectors)
            written = signature.written[outcome] = (
                keys, [(pseudo, dict(self.cascaded[etree_element, pseudo])) for pseudo in pseudos])
            return keys
        self.copied += 1
        for pseudo, declarations in written[1]:
            self.cascaded[etree_element, pseudo] = declarations.copy()
        return written[0]

    def write(self, etree_element, matched) -> tuple:
        """weasyprint's own writing of the matched declarations."""
        cascaded_styles, declaration_precedence = self.cascaded, self.precedence
        selectors_keys = []
        for (sheet, origin, sheet_specificity), selectors in zip(self.sheets, matched):
            for selector in selectors:
                specificity, order, pseudo_type, (declarations, layer) = selector
                layer_order = inf if layer is None else sheet.layers.index(layer)
                selectors_keys.append(
                    (sheet, specificity, id(declarations), layer_order))
                specificity = sheet_specificity or specificity
                style = cascaded_styles.setdefault((etree_element, pseudo_type), {})
                for name, values, importance in declarations:
                    precedence = declaration_precedence(origin, importance)
                    weight = (precedence, layer_order, specificity)
                    old_weight = style.get(name, (None, None))[1]
                    if old_weight is None or old_weight <= weight:
                        style[name] = values, weight
        return tuple(selectors_keys)


def _style_attributes(css, html, presentational_hints, cascaded_styles) -> dict:
    """weasyprint's own first step: the style attributes and presentational
    hints, written first; the last declarations found per element."""
    layer_order = inf
    elements_declarations = {}
    for specificity, element, declarations, base_url in css.find_style_attributes(
            html.etree_element, presentational_hints, html.base_url):
        style = cascaded_styles.setdefault((element, None), {})
        elements_declarations[element] = tuple(declarations)
        for name, values, importance in css.preprocess_declarations(
                base_url, declarations):
            precedence = css.declaration_precedence('author', importance)
            weight = (precedence, layer_order, specificity)
            old_weight = style.get(name, (None, None))[1]
            if old_weight is None or old_weight <= weight:
                style[name] = values, weight
    return elements_declarations


def _style_for_init(css, own):
    """StyleFor.__init__ with the matching kept per signature; weasyprint's
    own (``own``) for sheets whose matcher is not cssselect2's."""

    def __init__(self, html, sheets, presentational_hints, font_config, target_collector):
        if any(type(sheet.matcher) is not cssselect2.Matcher for sheet, _, _ in sheets):
            return own(self, html, sheets, presentational_hints, font_config, target_collector)
        # As weasyprint's own from here, but for cascade.apply.
        self._cascaded_styles = cascaded_styles = {}
        self._computed_styles = computed_styles = {}
        self.initial_page_sizes = {'box': None, 'area': None}
        self._sheets = sheets
        self.font_config = font_config
        css.PROGRESS_LOGGER.info('Step 3 - Applying CSS')
        elements_declarations = _style_attributes(
            css, html, presentational_hints, cascaded_styles)
        cascade = _Cascade(css, sheets, cascaded_styles)
        computed_cache = {}
        elements = 0
        for element in html.wrapper_element.iter_subtree():
            elements += 1
            etree_element = element.etree_element
            parent = element.parent.etree_element if element.parent else None
            parent_id = id(computed_styles[parent, None]) if element.parent else None
            element_declarations = elements_declarations.get(etree_element)
            selectors_keys = cascade.apply(element, etree_element, parent)
            key = (parent_id, element_declarations, selectors_keys)
            if key in computed_cache:
                computed_styles[etree_element, None] = computed_cache[key]
            else:
                self.set_computed_styles(
                    etree_element, root=html.etree_element, parent=parent,
                    base_url=html.base_url, target_collector=target_collector)
                computed_cache[key] = computed_styles[etree_element, None]
        for element, pseudo_type in cascaded_styles:
            if pseudo_type:
                self.set_computed_styles(
                    element, pseudo_type=pseudo_type,
                    root=html.etree_element, parent=element,
                    base_url=html.base_url, target_collector=target_collector)
        self._cascaded_styles.clear()
        counts.update(elements=elements, signatures=len(cascade.signatures),
                      general_tests=cascade.general_tests, copied=cascade.copied)

    __init__.__doc__ = own.__doc__
    __init__._rcdoc_own = own
    return __init__
