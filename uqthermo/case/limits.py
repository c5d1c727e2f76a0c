"""Size limits of a case file, checked before anything costly is done.

A case file is at most 5 MB, but a small file can still ask for a huge amount of work:
a name of 200 000 characters, keys nested 200 000 levels deep (which the TOML parser
handles in quadratic memory), thousands of outputs with thousands of temperatures each.
Each limit below is generous for real work and gives a keyed input error (exit 2) when
exceeded; ``docs/case-format.md`` ("Limits") lists them for users.

The nesting depth is measured on the text itself (:func:`toml_nesting_problem`), before
the parser sees it, by a linear scan that skips strings and comments.
"""

from __future__ import annotations

__all__ = ["MAX_NAME_LENGTH", "MAX_NESTING", "MAX_SPECIES", "MAX_REACTIONS", "MAX_OUTPUTS", "MAX_POINTS",
           "MAX_SEED", "SEED_RANGE_TEXT", "toml_nesting_problem", "short_key"]

#: species, reaction and output names (characters)
MAX_NAME_LENGTH = 100
#: depth of TOML nesting: parts of one dotted key or table header, and brackets/braces in one value
MAX_NESTING = 20
#: species in one case
MAX_SPECIES = 5000
#: reactions in one case (tables and a reaction_set file together)
MAX_REACTIONS = 20_000
#: outputs in one case (after expanding reactions = ["*"])
MAX_OUTPUTS = 5000
#: output points (temperatures) of all outputs together; one curve has at most 2000
MAX_POINTS = 50_000
#: random seeds: settings.seed and --seed (numpy's SeedSequence takes any integer; this keeps one range)
MAX_SEED = 2**63 - 1
SEED_RANGE_TEXT = "a whole number from 0 to 2^63 - 1 (9223372036854775807)"


def short_key(text: str, limit: int = 40) -> str:
    """A key or name for an error line: itself, or its start and its length when long."""
    return text if len(text) <= limit else f"{text[:limit]}…({len(text)} characters)"


def _skip_string(text: str, i: int) -> int:
    """Index after the TOML string starting at ``text[i]`` (basic, literal, multi-line); len(text) if unterminated."""
    n = len(text)
    q = text[i]
    if text.startswith(q * 3, i):
        end = text.find(q * 3, i + 3) if q == "'" else _find_basic_ml(text, i + 3)
        if end < 0:
            return n
        end += 3
        while end < n and text[end] == q:      # up to two quotes may close the string ("""a"""")
            end += 1
        return end
    j = i + 1
    while j < n:
        c = text[j]
        if c == "\\" and q == '"':
            j += 2
            continue
        if c == q or c == "\n":
            return j + 1
        j += 1
    return n


def _find_basic_ml(text: str, j: int) -> int:
    n = len(text)
    while j < n:
        c = text[j]
        if c == "\\":
            j += 2
            continue
        if text.startswith('"""', j):
            return j
        j += 1
    return -1


def toml_nesting_problem(text: str, limit: int = MAX_NESTING) -> tuple[str, str] | None:
    """``(key, message)`` when the TOML text nests deeper than ``limit``, else None.

    Counted without parsing: the parts of a dotted key (``a.b.c = 1``) or table header
    (``[a.b.c]``), and the open brackets and braces within one value (``[[[1]]]``,
    ``{a = {b = {}}}``), each against ``limit``. Strings and comments are skipped; the
    scan is linear in the length of the text.
    """
    n = len(text)
    i = 0
    line = 1
    stack: list[str] = []          # open [ and { of the current value
    key_parts = 1                  # parts of the key being read
    expect_key = True              # at a line start (outside values) or after { or , in an inline table
    key_start = 0
    while i < n:
        c = text[i]
        if c in "\"'":
            j = _skip_string(text, i)
            line += text.count("\n", i, j)
            i = j
            continue
        if c == "#":
            j = text.find("\n", i)
            i = n if j < 0 else j
            continue
        if c == "\n":
            line += 1
            if not stack:
                expect_key, key_parts, key_start = True, 1, i + 1
            i += 1
            continue
        if expect_key:
            if c == "[" and not stack:           # a table header: [a.b] or [[a.b]]
                j = i
                parts = 1
                while j < n and text[j] != "\n":
                    d = text[j]
                    if d in "\"'":
                        j = _skip_string(text, j)
                        continue
                    if d == ".":
                        parts += 1
                        if parts > limit:
                            return (short_key(text[i:j].strip("[] "), 40),
                                    f"table header nested more than {limit} levels deep (line {line}); "
                                    "a case needs far fewer")
                    if d == "]" or d == "#":
                        break
                    j += 1
                i = j
                expect_key = False
                continue
            if c == ".":
                key_parts += 1
                if key_parts > limit:
                    return (short_key(text[key_start:i].strip(), 40),
                            f"dotted key nested more than {limit} levels deep (line {line}); a case needs far fewer")
            elif c == "=":
                expect_key = False
                key_parts = 1
            elif c == "}" and stack and stack[-1] == "{":   # empty inline table {}
                stack.pop()
                expect_key = bool(stack) and stack[-1] == "{"
            i += 1
            continue
        if c in "[{":
            stack.append(c)
            if len(stack) > limit:
                return ("", f"TOML nesting too deep: more than {limit} nested brackets or braces (line {line}); "
                            "a case needs far fewer")
            if c == "{":
                expect_key, key_parts, key_start = True, 1, i + 1
        elif c in "]}":
            if stack:
                stack.pop()
        elif c == "," and stack and stack[-1] == "{":
            expect_key, key_parts, key_start = True, 1, i + 1
        i += 1
    return None
