"""The cells of the CSV results, made on whole columns: figures, text, findings and their messages.

Figures are written as Python's repr writes them (the shortest text that
reads back as the same float), looked up by the integer each rounded figure
is a multiple of (`RoundedText`).  Text is quoted exactly as the csv module's
minimal quoting would, and a cell that starts with =, +, - or @ is written
after a ' so that a spreadsheet never runs it as a formula.  Each finding's
message is made once per distinct (value, limit, severity) and joined to its
rows by index.
"""

from __future__ import annotations

import math
from collections import Counter
from collections.abc import Sequence

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from osmodose.audit.run import ChunkResult
from osmodose.check.judging import SEVERITY_NAMES
from osmodose.check.rules import RULES, RuleOutcome, shown_keys

FINDING_SEPARATOR = ";"
MESSAGE_SEPARATOR = " | "
#: A CSV cell with one of these is quoted (the csv module's minimal quoting).
SPECIAL = '[,"\\r\\n]'
#: A cell starting with one of these is written after a ' (a spreadsheet would run it as a formula).
FORMULA = "^[=+\\-@]"
_SPECIAL_BYTES = np.zeros(256, dtype=bool)
_SPECIAL_BYTES[[ord(c) for c in ',"\r\n']] = True
_FORMULA_BYTES = np.zeros(256, dtype=bool)
_FORMULA_BYTES[[ord(c) for c in "=+-@"]] = True

#: Where pyarrow's shortest form of a float is Python's repr once an integral value gets its ".0":
#: outside it (and for infinities) repr is used, value by value.
_SAME_AS_REPR = (1e-4, 1e10)
#: A figure rounded to d decimals is k / 10**d for an integer k; below this |k| that k is exact.
_EXACT_INTEGER = 2.0**52
#: The most entries a table of texts grows to (about 8 bytes each), and the most added for one column.
_TABLE_MOST = 1 << 20
_TABLE_STEP = 1 << 16


def float_text(values: np.ndarray) -> pa.Array:
    """Shortest round-trip text of each figure, as Python's repr writes it; null where it cannot be computed."""
    values = np.asarray(values, dtype=float)
    nan = np.isnan(values)
    text = pc.cast(pa.array(values, mask=nan), pa.string())
    size = np.abs(values)
    with np.errstate(invalid="ignore"):
        alike = ((size >= _SAME_AS_REPR[0]) & (size < _SAME_AS_REPR[1])) | (size == 0)
        integral = alike & (values == np.floor(values))
    if integral.any():
        mask = pa.array(integral)
        text = pc.replace_with_mask(text, mask, pc.binary_join_element_wise(text.filter(mask), ".0", ""))
    other = np.flatnonzero(~alike & ~nan)
    if len(other):
        mask = np.zeros(len(values), dtype=bool)
        mask[other] = True
        text = pc.replace_with_mask(text, pa.array(mask), pa.array([repr(v) for v in values[other].tolist()]))
    return text


class RoundedText:
    """The text of figures rounded to `decimals` places, looked up rather than formatted.

    A figure rounded to d decimals (numpy's rule: `precision.rounded`) is the
    float nearest k / 10**d for an integer k, and its repr is made once per k
    in a table that grows to the range of k the figures need: a column of
    figures is then an array take, whatever its length.  Figures that are not
    k / 10**d exactly, or lie far outside the table, go through `float_text`,
    so the text is repr's in every case.  Shared by the writer's threads: the
    table is replaced whole, never changed in place.
    """

    def __init__(self, decimals: int) -> None:
        self.decimals = decimals
        self.scale = 10.0**decimals
        self._table: tuple[int, pa.Array] = (0, pa.array([], pa.string()))
        # ".0" for whole numbers, else the decimals without their trailing zeros (".5", ".05", ".25").
        self._fractions = pa.array(
            [".0", *(f".{k:0{decimals}d}".rstrip("0") for k in range(1, 10**decimals))], pa.string()
        )

    def _texts(self, start: int, stop: int) -> pa.Array:
        """repr(k / 10**d) for k in [start, stop).

        Where repr writes k / 10**d positionally (k's digits, the point d
        places from the right, trailing zeros dropped but one), the texts are
        put together on whole columns; elsewhere (very large, or more decimals
        than a short table of fractions) repr is called.
        """
        scale, d = self.scale, self.decimals
        if d > 4 or max(abs(start), abs(stop)) >= 1e15:
            return pa.array([repr(k / scale) for k in range(start, stop)], pa.string())
        k = np.arange(start, stop, dtype=np.int64)
        whole, fraction = np.divmod(np.abs(k), 10**d)
        sign = pa.array(["", "-"], pa.string()).take(pa.array((k < 0).astype(np.int64)))
        return pc.binary_join_element_wise(
            sign, pc.cast(pa.array(whole), pa.string()), self._fractions.take(pa.array(fraction)), ""
        )

    def _grown(self, low: int, high: int, rows: int) -> tuple[int, pa.Array]:
        """The table, grown to take in [low, high] unless that means too many new entries."""
        start, table = self._table
        stop = start + len(table)
        if not len(table):
            start = stop = low
        new_start, new_stop = min(start, low), max(stop, high + 1)
        added = (start - new_start) + (new_stop - stop)
        if not added or new_stop - new_start > _TABLE_MOST or added > max(_TABLE_STEP, 2 * rows):
            return self._table
        grown = (new_start, pa.concat_arrays([self._texts(new_start, start), table, self._texts(stop, new_stop)]))
        self._table = grown
        return grown

    def column(self, values: np.ndarray) -> pa.Array:
        """The figures' texts; null where a figure is NaN (cannot be computed)."""
        if np.isnan(values).all():  # a figure no row of the chunk has (urine's, without urine columns)
            return pa.nulls(len(values), pa.string())
        with np.errstate(invalid="ignore", over="ignore"):
            k = np.rint(values * self.scale)
            exact = k / self.scale == values  # NaN never is; an infinity is, and is never inside a table
            start, table = self._table
            index = k - start
            inside = exact & (index >= 0) & (index < len(table))
            if not inside.all() and (exact & ~inside).any():
                start, table = self._cover(k[exact & (np.abs(k) < _EXACT_INTEGER)], len(values))
                index = k - start
                inside = exact & (index >= 0) & (index < len(table))
            positions = index.astype(np.int64)  # NaN and infinities come out as nonsense, masked
        text = table.take(pa.array(positions, mask=~inside))
        other = ~inside & ~np.isnan(values)  # a figure outside the table: formatted alone
        if other.any():
            text = pc.replace_with_mask(text, pa.array(other), float_text(values[other]))
        return text

    def _cover(self, found: np.ndarray, rows: int) -> tuple[int, pa.Array]:
        """The table grown to the figures' range (those near zero, when a few lie far out), where it may grow."""
        if not len(found):
            return self._table
        low, high = int(found.min()), int(found.max())
        if high - low > _TABLE_MOST:
            found = found[np.abs(found) < _TABLE_MOST // 2]
            if not len(found):
                return self._table
            low, high = int(found.min()), int(found.max())
        return self._grown(low, high, rows)


def _may_need_marks(array: pa.Array) -> bool:
    """Whether any cell may need quotes or a ': a special character anywhere, or a formula one first."""
    if array.type != pa.string() or array.null_count:
        return True
    _, offsets_buffer, data = array.buffers()
    if data is None or not len(array):
        return False
    offsets = np.frombuffer(offsets_buffer, dtype=np.int32)[array.offset : array.offset + len(array) + 1]
    chars = np.frombuffer(data, dtype=np.uint8)[offsets[0] : offsets[-1]]
    if _SPECIAL_BYTES[chars].any():
        return True
    starts = offsets[:-1][offsets[1:] > offsets[:-1]] - offsets[0]
    return bool(_FORMULA_BYTES[chars[starts]].any())


def csv_text(values: pa.Array | Sequence[str]) -> pa.Array:
    """A text column as CSV cells: formula-safe, then quoted as `csv.QUOTE_MINIMAL` would."""
    array = values if isinstance(values, pa.Array) else pa.array(list(values), pa.string())
    if not _may_need_marks(array):
        return array
    array = formula_safe(array)
    special = pc.match_substring_regex(array, SPECIAL)
    if pc.any(special).as_py():
        quoted = pc.binary_join_element_wise('"', pc.replace_substring(array, '"', '""'), '"', "")
        array = pc.if_else(special, quoted, array)
    return array


def formula_safe(array: pa.Array) -> pa.Array:
    """Cells a spreadsheet would run as a formula (=, +, -, @ first) written after a '."""
    formula = pc.match_substring_regex(array, FORMULA)
    if pc.any(formula).as_py():
        array = pc.if_else(formula, pc.binary_join_element_wise("'", array, ""), array)
    return array


def _repeated(text: str, n: int) -> pa.Array:
    return pa.array([text], pa.string()).take(pa.array(np.zeros(n, dtype=np.int64)))


def finding_columns(
    chunk: ChunkResult, for_csv: bool = False, end: str = "", made: Messages | None = None
) -> tuple[pa.Array, pa.Array]:
    """Each row's "code:severity" list and message list, refusals first, then in rule order (as check lists them).

    A rule's message is made once per distinct (value, limit, severity); rows
    take theirs by index, and each row's list is joined by pyarrow.  With
    `for_csv` the messages come as CSV cells: quotes doubled and the cell
    quoted where a message needs it, and a leading =, +, - or @ written after
    a ' (both found once per distinct message).  `end` is added to each
    message cell (a line's end: one pass over the text, not two).  `made`
    keeps messages from one chunk to the next.
    """
    n = len(chunk)
    rows: list[np.ndarray] = []
    codes: list[np.ndarray] = []
    picks: list[np.ndarray] = []
    texts: list[str] = []
    code_texts: list[str] = []
    for level in (2, 1):  # refusals first; within a severity, rules in their order
        for outcome in chunk.outcomes:
            fired = np.flatnonzero(outcome.severity == level)
            if not len(fired):
                continue
            name = SEVERITY_NAMES[level]
            if outcome.extra is not None:  # words from more of the row than (value, limit): one message each
                pick = len(texts) + np.arange(len(fired))
                texts += [outcome.message(k) for k in fired.tolist()]
            else:
                pick = _message_picks(outcome, fired, name, texts, made)
            picks.append(pick)
            codes.append(np.full(len(fired), len(code_texts)))
            code_texts.append(f"{outcome.code}:{name}")
            rows.append(fired)
    if not rows:
        return _repeated("", n), _repeated(end, n)
    row = np.concatenate(rows)
    counts = np.bincount(row, minlength=n)
    order = _row_order(rows, counts)
    offsets = pa.array(np.concatenate([[0], np.cumsum(counts)]).astype(np.int32))
    picked = np.concatenate(picks)[order]
    distinct = pa.array(texts, pa.string())
    if for_csv:
        special = _special(distinct)
        formula = pc.match_substring_regex(distinct, FORMULA).to_numpy(zero_copy_only=False)
        # A message with a quote is special too, so doubling every quote changes only cells that get quoted.
        distinct = pc.replace_substring(distinct, '"', '""')
    message = distinct.take(pa.array(picked))
    code = pa.array(code_texts, pa.string()).take(pa.array(np.concatenate(codes)[order]))
    joined = pc.binary_join(pa.ListArray.from_arrays(offsets, message), MESSAGE_SEPARATOR)
    if for_csv:
        quote = np.bincount(row[order], weights=special[picked], minlength=n) > 0
        # A row's cell starts with its first message: a formula character there takes a '.
        led = np.zeros(n, dtype=bool)
        has = counts > 0
        led[has] = formula[picked[np.cumsum(counts)[has] - counts[has]]]
        if quote.any() or led.any() or end:
            marks = quote.astype(np.int64)
            prefix = pa.array(["", "'", '"', "\"'"], pa.string()).take(pa.array(2 * marks + led))
            suffix = pa.array([end, '"' + end], pa.string()).take(pa.array(marks))
            joined = pc.binary_join_element_wise(prefix, joined, suffix, "")
    elif end:
        joined = pc.binary_join_element_wise(joined, end, "")
    return pc.binary_join(pa.ListArray.from_arrays(offsets, code), FINDING_SEPARATOR), joined


def _row_order(rows: list[np.ndarray], counts: np.ndarray) -> np.ndarray:
    """The order that lists the findings row by row, each row's in the order of `rows` (a stable sort by row).

    Each array of `rows` holds distinct rows, so a finding's place is its
    row's first place plus the findings that row had in the arrays before.
    """
    first = np.cumsum(counts) - counts
    before = np.zeros(len(counts), dtype=np.int64)
    place = np.empty(int(counts.sum()), dtype=np.int64)
    at = 0
    for fired in rows:
        place[at : at + len(fired)] = first[fired] + before[fired]
        before[fired] += 1
        at += len(fired)
    order = np.empty_like(place)
    order[place] = np.arange(len(place))
    return order


def _special(texts: pa.Array) -> np.ndarray:
    """Which texts need quoting: most messages have a comma (found quickly); the rest are searched whole."""
    special = pc.match_substring(texts, ",").to_numpy(zero_copy_only=False)
    rest = np.flatnonzero(~special)
    if len(rest):
        others = pc.match_substring_regex(texts.take(pa.array(rest)), SPECIAL).to_numpy(zero_copy_only=False)
        special[rest] = others
    return special


#: Codes that name one rule of the table (a message kept by code is then that rule's words).
_ONE_RULE_CODES = frozenset(code for code, n in Counter(rule.code for rule in RULES).items() if n == 1)


class Messages:
    """Messages already made for rules whose words show the value through `rules.shown`, by key.

    Such a rule has a few thousand keys in a whole file (a value to one
    decimal), met again in every chunk: each message is made once per file.
    Shared by the writer's threads (two may make the same message: no harm);
    emptied when it holds `MOST` messages, so memory stays flat.
    """

    MOST = 200_000

    def __init__(self) -> None:
        self._made: dict[tuple[str, str, float, float], str] = {}

    def get(self, outcome: RuleOutcome, severity: str, limit: float, key: float, value: float) -> str:
        if outcome.code not in _ONE_RULE_CODES:  # a code of several rules (several words): not kept
            return outcome.describe(value, limit, severity)
        index = (outcome.code, severity, limit, key)
        text = self._made.get(index)
        if text is None:
            if len(self._made) >= self.MOST:
                self._made.clear()
            text = self._made[index] = outcome.describe(value, limit, severity)
        return text


def _message_picks(
    outcome: RuleOutcome, fired: np.ndarray, severity: str, texts: list[str], made: Messages | None = None
) -> np.ndarray:
    """Each fired row's index into `texts`, to which each distinct (value, limit) message is added once."""
    pick = np.empty(len(fired), dtype=np.int64)
    limits = outcome.limit[fired]
    values = outcome.value[fired]
    # Limits take a few values (one per agent at most): distinct values within each, or distinct
    # keys where the words show the value through `rules.shown` (a value per key stands for them all).
    for limit in np.unique(limits).tolist():
        same = np.isnan(limits) if math.isnan(limit) else limits == limit
        these = values[same]
        if outcome.shows_value:
            keys, first, inverse = np.unique(shown_keys(these, limit), return_index=True, return_inverse=True)
            pick[same] = len(texts) + inverse.reshape(-1)
            pairs = zip(keys.tolist(), these[first].tolist(), strict=True)
            if made is None:
                texts += [outcome.describe(value, limit, severity) for _, value in pairs]
            else:
                texts += [made.get(outcome, severity, limit, key, value) for key, value in pairs]
            continue
        # Other words get each value alone: keyed by its bits, so that -0.0 is not taken for 0.0.
        _, first, inverse = np.unique(these.view(np.int64), return_index=True, return_inverse=True)
        pick[same] = len(texts) + inverse.reshape(-1)
        texts += [outcome.describe(value, limit, severity) for value in these[first].tolist()]
    return pick
