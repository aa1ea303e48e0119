"""What a Gerber file's name and header say it is: copper (top, inner n, bottom) or something else.

Names are split into words (``EtchLayerTop.gdo`` -> etch layer top gdo; ``In2_Cu`` -> in 2 cu);
words glued together (``CoppertopL1``, ``Solderstopmasktop``) are split on a vocabulary
of layer words. The file header may name the layer too (``%IN…*%``, ``%LN…*%``,
``G04 Layer: …``) or give its place in the stack (``Layer_Physical_Order=n``). gerbonara's
own file-name rules, per design tool, give a second opinion.
"""
from __future__ import annotations

import copy
import re
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

#: words that mark a file as not copper
NOT_COPPER = frozenset(
    "mask soldermask stop resist silk silks silkscreen screen legend overlay paste cream stencil placement print "
    "posi outline outlline profile edge cuts edgecuts keepout courtyard fab fabrication assy assembly drill "
    "drilling drl mech mechanical dimension dimensions dim contour rout uroute boundary comment comments drawing "
    "notes doc documentation smt smb sst ssb spt spb adhesive glue peelable carbon gold via_fill".split())
TOP_WORDS = frozenset("top front component comp primary".split())
BOTTOM_WORDS = frozenset("bottom bot back secondary solderside".split())
#: words after which a number is the copper layer's number (L2, In2_Cu, layer 3, Art04, Inner1)
NUMBERED = frozenset("l layer lyr ly in inner int art copper cu sig signal plane gnd pwr mid conductor etch".split())
COPPER_WORDS = frozenset("copper cu etch signal sig conductor conductive plane gnd ground pwr power inner "
                         "circuitry routing".split())
#: words that say nothing by themselves but let glued words be split
NEUTRAL = frozenset("layer board pcb file plot side through thru plated non np image data l lyr in int art mid "
                    "solder of".split())
VOCABULARY = NOT_COPPER | TOP_WORDS | BOTTOM_WORDS | NUMBERED | COPPER_WORDS | NEUTRAL

#: name endings that are containers, not roles
_CONTAINER_EXT = frozenset("gbr ger gbx pho art gdo gb gx phd lgr txt".split())
_EXT_TOP = frozenset("gtl cmp top toplayer".split())
_EXT_BOTTOM = frozenset("gbl sol bot bottom bottomlayer".split())
_EXT_INNER = re.compile(r"^(?:gp?|in|ly|l|g[il])(\d{1,2})$")
_EXT_NOT_COPPER = re.compile(r"^(?:gts|gbs|gto|gbo|gtp|gbp|gko|gml|gtm|gbm|gpt|gpb|gm\d{1,2}|gd\d{0,2}|gg\d{0,2}|"
                             r"stc|sts|plc|pls|crc|crs|dim|mil|drd|fab|asb|ast|lht|smt|smb|sst|ssb|spt|spb|"
                             r"drl|xln|exc|ncd|apr|rep|rul|tool|whl|info|dsn|gpf)$")

_TOKEN = re.compile(r"[A-Z]+(?![a-z])|[A-Z]?[a-z]+|\d+")
_HEADER_NAME = re.compile(r"%(?:IN|LN)\s*([^*%]*)\*%|G04\s+Layer(?:\s+Name)?\s*[:=\s]\s*([^*\r\n]*)", re.I)
_PHYSICAL_ORDER = re.compile(r"Layer_Physical_Order\s*=\s*(\d{1,3})", re.I)
#: bytes of a file's start searched for header names
HEADER_BYTES = 4096


@dataclass(frozen=True)
class LayerGuess:
    """What one piece of evidence says a file is."""

    role: str  # "top" | "inner" | "bottom" | "copper" (position unknown) | "other" | "unknown"
    number: int | None = None  # for "inner": the layer number the name gives
    evidence: str = ""  # the words that decided, for messages

    @property
    def is_copper(self) -> bool:
        return self.role in ("top", "inner", "bottom", "copper")


UNKNOWN = LayerGuess("unknown")


@lru_cache(maxsize=4096)
def _segment(word: str) -> tuple[str, ...] | None:
    """``word`` split into vocabulary words (longest first), or None when it is not made of them."""
    if word in VOCABULARY:
        return (word,)
    for cut in range(len(word) - 1, 0, -1):
        head = word[:cut]
        if head in VOCABULARY and len(head) > 1 and (rest := _segment(word[cut:])) is not None:
            return (head,) + rest
    return None


def name_words(text: str) -> list[str]:
    """Lower-case words and numbers of a name, camel case and glued layer words split."""
    out = []
    for token in _TOKEN.findall(text):
        word = token.lower()
        out.extend(_segment(word) or (word,) if not word.isdigit() else (word,))
    return out


def guess_from_words(words: list[str]) -> LayerGuess:
    """The role words give: any non-copper word wins; then a side word; then a layer number; then a copper word."""
    said = " ".join(words)
    if (bad := [w for w in words if w in NOT_COPPER]):
        return LayerGuess("other", None, bad[0])
    pairs = list(zip(words, words[1:]))
    if ("f", "cu") in pairs or any(w in TOP_WORDS for w in words):
        return LayerGuess("top", None, said)
    if ("b", "cu") in pairs or any(w in BOTTOM_WORDS for w in words):
        return LayerGuess("bottom", None, said)
    for word, number in pairs:
        if word in NUMBERED and number.isdigit() and 0 < int(number) < 100:
            return LayerGuess("inner", int(number), said)
    if any(w in COPPER_WORDS for w in words):
        return LayerGuess("copper", None, said)
    return UNKNOWN


def guess_from_name(file_name: str) -> LayerGuess:
    """What a file name says, the ending first (``.gtl``, ``.g3``, ``.Bot``, ``.gts``), then its words."""
    stem, dot, ext = file_name.rpartition(".")
    if not dot or not stem:
        stem, ext = file_name, ""
    low = ext.lower()
    if low in _EXT_TOP:
        return LayerGuess("top", None, f".{ext}")
    if low in _EXT_BOTTOM:
        return LayerGuess("bottom", None, f".{ext}")
    if (m := _EXT_INNER.match(low)):
        return LayerGuess("inner", int(m.group(1)), f".{ext}")
    if _EXT_NOT_COPPER.match(low):
        return LayerGuess("other", None, f".{ext}")
    words = name_words(stem) + ([] if low in _CONTAINER_EXT or not low else name_words(ext))
    return guess_from_words(words)


@dataclass(frozen=True)
class HeaderNames:
    """Layer names a Gerber header carries, and the stack position it states."""

    names: tuple[str, ...]
    physical_order: int | None

    def guess(self) -> LayerGuess:
        """The first header name that says something."""
        for name in self.names:
            guess = guess_from_words(name_words(Path(name.replace("\\", "/")).name if "." in name else name))
            if guess is not UNKNOWN:
                return LayerGuess(guess.role, guess.number, f"header '{name}'")
        return UNKNOWN


def header_names(head: str) -> HeaderNames:
    """Names and stack position from the start of a Gerber file's text."""
    names = []
    for m in _HEADER_NAME.finditer(head[:HEADER_BYTES]):
        text = (m.group(1) or m.group(2) or "").strip().strip('"').strip()
        if text:
            names.append(text)
    order = _PHYSICAL_ORDER.search(head[:HEADER_BYTES])
    return HeaderNames(tuple(names), int(order.group(1)) if order else None)


def gerbonara_guesses(paths: list[Path]) -> dict[Path, LayerGuess]:
    """gerbonara's opinion per file, from its per-tool file-name rules (the tool matching most files wins).

    gerbonara keeps its rules in module data that its matcher edits, so each tool's rules are copied first.
    Any failure (an unreadable header, a change in gerbonara) means no opinion.
    """
    try:
        from gerbonara.layer_rules import MATCH_RULES
        from gerbonara.layers import apply_rules

        best: dict = {}
        for rules in MATCH_RULES.values():
            certain, found = apply_rules(list(paths), copy.deepcopy(rules))
            if certain:
                best = found
                break
            if sum(map(len, found.values())) > sum(map(len, best.values())):
                best = found
    except Exception:  # a second opinion only: gerbonara's internals may change or trip on a file
        return {}
    out = {}
    for layer, files in best.items():
        guess = _from_gerbonara(str(layer))
        for path in files:
            out[path] = guess
    return out


def _from_gerbonara(layer: str) -> LayerGuess:
    side, _, use = layer.partition(" ")
    evidence = f"gerbonara: {layer}"
    if use != "copper":
        return LayerGuess("other", None, evidence)
    if side in ("top", "bottom"):
        return LayerGuess(side, None, evidence)
    if side.startswith("inner_") and side[6:].isdigit():
        return LayerGuess("inner", int(side[6:]), evidence)
    return LayerGuess("copper", None, evidence)


def decide(by_name: LayerGuess, by_header: LayerGuess, by_gerbonara: LayerGuess | None) -> LayerGuess:
    """One verdict: the name when it places the file or rules it out; else the header; else gerbonara.

    A bare "copper" (no place in the stack) gives way to any later opinion that places the file.
    """
    opinions = [g for g in (by_name, by_header, by_gerbonara) if g is not None and g is not UNKNOWN]
    placed = [g for g in opinions if g.role != "copper"]
    if placed:
        return placed[0]
    return opinions[0] if opinions else UNKNOWN
