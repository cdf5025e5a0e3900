"""Transfer-function coefficients as polynomials in the part values, for very large batches.

For a netlist whose every part stamps one parameter into the MNA pencil through a rank-one update
(a resistor its conductance, a capacitor its capacitance, an inductor its inductance and winding
resistance), ``D(s) = det(G + s·C)`` and the Cramer numerator ``N(s)`` are *multi-affine* in those
parameters: of degree at most one in each. The op-amp parameters ``1/A0`` and ``1/ω_t`` are shared
by the ``m`` op-amps of a netlist, so they appear with degree at most ``m``. Hence every
coefficient of ``N`` and ``D`` is a fixed polynomial in the parameters,

    D(s) = Σ_k s^k Σ_S c_{S,k} Π_i x_i^{S_i},

with a few dozen monomials for a one-op-amp band-pass. :class:`Expansion` finds the ``c_{S,k}``
once, exactly, by evaluating the pencil at the integer points ``x_i ∈ {0, 1, …, d_i}`` (every entry
then is an integer, and the determinants are exact) and inverting the per-axis Vandermonde
matrices; a batch of part values then costs one matrix product instead of one LU factorisation per
trial and interpolation point. The result is checked against
:func:`bandsmith.solver.rational.rational_from_system` on a few perturbed members when built; a netlist that
does not fit the assumptions raises :class:`ExpansionUnavailable` and callers use the solver.

The fits of our circuits' usual structures ship precomputed (``bandsmith/resources/expansions.json``,
looked up by :func:`structure_hash` of the netlist structure and read lazily, one entry at a time),
so that a process's first analysis does not pay for them; a structure the file does not hold is
fitted and verified on first use as above.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from bandsmith.resources import resource_path
from bandsmith.solver.mna import IDEAL, OpAmpModel, build_system
from bandsmith.solver.netlist import PASSIVE_KINDS, Netlist
from bandsmith.solver.rational import _ANGLE_OFFSET, Rational, _circle, _degree_bound, first_kept, largest_in_rows, rational_from_system

__all__ = ["Variable", "Expansion", "ExpansionUnavailable", "circuit_variables", "unit_expansion", "UNIT_OPAMP", "MAX_POINTS", "structure_hash", "table_entry", "table_text", "table_path",
           "SMALL_BATCH", "TABLE_FORMAT", "unit_expansion_values"]

# An op-amp model whose stamps are 1 (``1/A0`` and ``1/ωt``, s-units): with it a unit expansion's
# op-amp ratios are 1 and its absent or unit stamps select the op-amp's terms.
UNIT_OPAMP = OpAmpModel(gbw_hz=1.0 / (2.0 * math.pi), a0=1.0)

# Largest number of integer points the expansion evaluates (2^14 for 14 one-degree parameters).
MAX_POINTS = 1 << 14
# Monomial coefficients below this fraction of the largest are rounding noise (they are integers).
_ZERO = 1e-9
# Largest relative disagreement with the solver accepted when the expansion is verified.
_VERIFY_RTOL = 1e-8


# The kinds whose stamp is the reciprocal of the value (a resistor's conductance, 1/(2π·GBW), 1/A0).
_INVERSE_KINDS = ("R", "gbw", "a0")


class ExpansionUnavailable(RuntimeError):
    """The netlist does not fit the expansion (too many parameters, or a check failed)."""


@dataclass(frozen=True, slots=True)
class Variable:
    """One parameter of the expansion.

    Attributes
    ----------
    name : str
        Part reference (``R1``, ``C2``, ``RL``), or ``"gbw"`` / ``"a0"`` for the op-amp.
    kind : str
        ``"R"`` (stamped as a conductance), ``"C"``, ``"L"``, ``"RS"`` (a winding's series
        resistance), ``"gbw"`` (stamped as ``1/(2π·GBW)``) or ``"a0"`` (stamped as ``1/A0``).
    value : float
        The nominal value in SI units (ohm, F, H, Hz, V/V).
    degree : int
        Highest power of the parameter in the determinant (1, or the op-amp count).
    """

    name: str
    kind: str
    value: float
    degree: int = 1

    @property
    def inverse(self) -> bool:
        """True where the stamped parameter is the reciprocal of the value (R, GBW, A0)."""
        return self.kind in _INVERSE_KINDS

    def stamped(self, t: np.ndarray) -> np.ndarray:
        """The part value whose stamp equals ``t`` (0 gives an absent stamp)."""
        t = np.asarray(t, dtype=float)
        with np.errstate(divide="ignore"):
            if self.kind == "gbw":
                return np.where(t == 0, np.inf, 1.0 / (2.0 * np.pi * np.where(t == 0, 1.0, t)))
            if self.inverse:
                return np.where(t == 0, np.inf, 1.0 / np.where(t == 0, 1.0, t))
        return t

    @property
    def log_stamp(self) -> float:
        """Natural log of the nominal stamped parameter."""
        if self.kind == "gbw":
            return -math.log(2.0 * math.pi * self.value)
        return -math.log(self.value) if self.inverse else math.log(self.value)


def circuit_variables(netlist: Netlist, opamp: OpAmpModel = IDEAL) -> tuple[Variable, ...]:
    """The parameters of a netlist: every part with a value above zero, then the op-amp's.

    Parts come in netlist order; an inductor's winding resistance follows under its
    ``series_ref`` (or ``"<ref>.rs"``) when it is above zero. A finite op-amp adds ``gbw`` and
    ``a0`` (degree: the number of op-amps).
    """
    named, values, _ = _values_and_key(netlist, opamp)
    return _variables(named, values)


def _variables(named: list[tuple[str, str, int]], values: list[float]) -> tuple[Variable, ...]:
    """The records of :func:`_values_and_key`'s variables."""
    return tuple(Variable(name, kind, value, degree) for (name, kind, degree), value in zip(named, values))


def _values_and_key(netlist: Netlist, opamp: OpAmpModel) -> tuple[list[tuple[str, str, int]], list[float], tuple]:
    """:func:`circuit_variables` as their ``(name, kind, degree)`` and their values (plain
    floats: cheaper to make than the records, where a kept expansion's lookup needs only the
    structure and the values), and the structure key (:func:`_keyed`)."""
    named, values = [], []
    m = 0  # op-amps
    for e in netlist.elements:
        kind = e.kind
        if kind == "opamp":
            m += 1
        elif kind in PASSIVE_KINDS:
            named.append((e.ref, kind, 1))
            values.append(float(e.value))
            if kind == "L" and e.series_resistance > 0:
                named.append((e.series_ref or e.ref + ".rs", "RS", 1))
                values.append(float(e.series_resistance))
    if not opamp.ideal and m:
        named += [("gbw", "gbw", m), ("a0", "a0", m)]
        values += [float(opamp.gbw_hz), float(opamp.a0)]
    return named, values, _keyed(netlist, named)


def _keyed(netlist: Netlist, named: list[tuple[str, str, int]]) -> tuple:
    """What an expansion's fit depends on: the netlist's elements without their values, its
    ground, input and output, and the ``(name, kind, degree)`` of each of its variables."""
    elements = tuple([(e.ref, e.kind, e.nodes if type(e.nodes) is tuple else tuple(e.nodes), e.series_ref) for e in netlist.elements])
    return (elements, netlist.ground, netlist.input, netlist.output, tuple(named))


def _system_for(netlist: Netlist, variables: tuple[Variable, ...], values: np.ndarray, opamp: OpAmpModel):
    """The MNA system with the parameters set to the columns of ``values`` (B, n), SI units."""
    overrides = {}
    gbw = a0 = None
    for j, v in enumerate(variables):
        if v.kind == "gbw":
            gbw = values[:, j]
        elif v.kind == "a0":
            a0 = values[:, j]
        else:
            overrides[v.name] = values[:, j]
    return build_system(netlist, opamp, overrides=overrides, gbw_hz=gbw, a0=a0)


@dataclass(frozen=True, slots=True)
class _Fit:
    """The value-independent part of an expansion: monomial exponents and integer-point
    coefficients (ascending powers of ``s``, a common factor ``s^low`` removed)."""

    # The exponents of the M monomials in the n_var variables over the log *ratios*, as
    # :meth:`Expansion.dense_log` takes them: transposed, (n_var, M) C-contiguous floats, the
    # row of an inverse variable (its stamp the reciprocal of the value) negated; and the log
    # ratio that makes each variable's stamp absent (both fixed by the variables' kinds, which
    # are part of the structure).
    exps_ratio: np.ndarray
    absent_log: np.ndarray
    den: np.ndarray
    num: np.ndarray
    low: int
    num_powers: tuple[int, ...]
    den_powers: tuple[int, ...]

    @property
    def exps(self) -> np.ndarray:
        """The exponents as integers, ``(M, n_var)`` (made when asked: the unit expansions use
        :attr:`exps_ratio` alone)."""
        return np.ascontiguousarray(np.abs(self.exps_ratio).T, dtype=np.int64)


# Structural fits by netlist structure (elements, nodes, which parameters are present): the
# integer-point determinants do not depend on the part values, so a circuit pays for them once.
_FITS: dict[tuple, _Fit] = {}

# The fits of our circuits' usual structures, computed ahead (tests/expansion_table.py writes the
# file; tests/test_expansion_table.py regenerates it and compares) so that a process's first
# analysis does not pay for them. Looked up by :func:`structure_hash`; a structure not in the
# file (a circuit added later, a changed netlist) is fitted and verified as before. A fit's
# inputs beside the structure are the constants below: a file written with other ones is ignored.
# Each entry's bytes carry a BLAKE2b digest in the index: a damaged entry is fitted instead, and a
# file that cannot be read as the table is ignored as a whole (never an error, never a wrong fit).
#
# Layout (format 4, valid JSON): line 1 "{", line 2 the stamp (:data:`_STAMP_TEXT`), line 3 the
# index, one string of fixed-width records "<hash>:<start>:<end>:<digest>;" sorted by hash (start
# and end: 8 hex digits, the byte offsets of the entry from the end of line 3), then one entry per
# line, in the same order: "<hash>": "<entry>", the entry a string of space-separated fields
# (:func:`_entry_text`: counts, powers, the exponent digits, and the nonzero coefficients as base64
# of their float64 bits and int32 indices, so a fit read back is the one written) or
# "unavailable: <reason>". A first use reads the file's head (the stamp and the index, about 2 KB)
# and the one entry it needs from one open file, not the whole file (about 50 KB: reading it
# measured 30–50 µs more); nothing in it is parsed as JSON: the stamp is compared as bytes, the
# index checked by its layout and searched as bytes, an entry split as bytes.
TABLE_FILE = "expansions.json"
TABLE_FORMAT = 4
# The index (None: not read yet): (its records, where the entries' offsets count from), or () when
# the file is missing or not usable as the table.
_TABLE: tuple | None = None
_HEAD_READ = 4096  # bytes read for the head (a longer index is read on)
_RECORD = 56  # one index record: 20 + 8 + 8 + 16 hex digits, three ":" and a ";"
_HEX = b"0123456789abcdef"
# The stamp as the file's second line holds it: json.dumps(_table_stamp(), sort_keys=True) (a test
# checks that they agree), written out so that a file's stamp is checked by comparing bytes (no
# float formatting or JSON parse in a process's first analysis).
_STAMP_TEXT = '{"angle_offset": 0.3771, "format": 4, "max_points": 16384, "zero": 1e-09}'
_HEAD = b'{\n"stamp": ' + _STAMP_TEXT.encode() + b',\n"index": "'  # how the file begins


def structure_hash(key: tuple) -> str:
    """A short, stable name of a structure key (:func:`_structure_key`): BLAKE2b of its ``repr``
    (:func:`hashlib.blake2b`, a 10-byte digest: 20 hex digits)."""
    import hashlib

    return hashlib.blake2b(repr(key).encode(), digest_size=10).hexdigest()


def _table_stamp() -> dict:
    """What a table's fits depend on beside the structure (written to, and checked in, the file)."""
    return {"format": TABLE_FORMAT, "zero": _ZERO, "angle_offset": _ANGLE_OFFSET, "max_points": MAX_POINTS}


_TABLE_PATH = resource_path(TABLE_FILE)


def table_path():
    """Where the shipped table is (a file of :mod:`bandsmith.resources`)."""
    return _TABLE_PATH


def _digest(entry: bytes) -> str:
    """The check of one entry's bytes in the table's index: BLAKE2b, an 8-byte digest (16 hex digits)."""
    import hashlib

    return hashlib.blake2b(entry, digest_size=8).hexdigest()


def _head(fh) -> bytes:
    """The open table file's first three lines (the stamp and the index), and what follows them in
    the same read."""
    head = fh.read(_HEAD_READ)
    while head.count(b"\n") < 3:
        more = fh.read(_HEAD_READ)
        if not more:
            break
        head += more
    return head


def _indexed(head: bytes) -> tuple:
    """``(records, base)`` of a table file's head: its index records and where the entries'
    offsets count from; () when it is not the table: another stamp, a header of another layout, or
    an index record that is not four fields of hex digits with its separators in place. (Each
    entry is checked by its length and digest when read: a file cut or changed further on loses
    only the entries it touches.)"""
    end = head.find(b"\n", len(_HEAD))
    if end < 0 or not head.startswith(_HEAD) or not head[:end].endswith(b'",'):
        return ()
    records = head[len(_HEAD) : end - 2]
    n = len(records) // _RECORD
    # every record four fields of lowercase hex digits: with the digits deleted only the separators
    # stay, and each separator sits where the fixed widths put it
    if n == 0 or len(records) % _RECORD or records.translate(None, _HEX) != b":::;" * n:
        return ()
    if not (records[20::_RECORD] == records[29::_RECORD] == records[38::_RECORD] == b":" * n
            and records[55::_RECORD] == b";" * n):
        return ()
    return (records, end + 1)


def _read_index(fh=None) -> tuple:
    """:data:`_TABLE`, the index read at first use: from ``fh`` (the table file, open) when the
    caller has it open, else from the file opened here; () when it cannot be read."""
    global _TABLE
    if _TABLE is None:
        try:
            if fh is not None:
                _TABLE = _indexed(_head(fh))
            else:
                with open(table_path(), "rb") as f:
                    _TABLE = _indexed(_head(f))
        except OSError:
            _TABLE = ()
    return _TABLE


def _span(records: bytes, name: str) -> tuple[int, int, str] | None:
    """``(start, end, digest)`` of entry ``name`` in the index ``records`` (checked by
    :func:`_indexed`), or None. A name is 20 hex digits (:func:`structure_hash`), found only at a
    record's start."""
    at = records.find(name.encode("ascii", "replace") + b":")
    if at < 0 or at % _RECORD or len(name) != 20:
        return None
    return int(records[at + 21 : at + 29], 16), int(records[at + 30 : at + 38], 16), records[at + 39 : at + 55].decode("ascii")


def _table_line(name: str) -> bytes | None:
    """The bytes of entry ``name`` in the shipped table (a JSON string), or None (not there, or its
    bytes do not match their length and digest: a damaged or cut entry). The first call reads the
    index too, from the same open file."""
    if _TABLE is not None and (not _TABLE or _span(_TABLE[0], name) is None):
        return None  # not usable, or not there: the file is not opened
    try:
        with open(table_path(), "rb") as fh:
            table = _read_index(fh)
            span = _span(table[0], name) if table else None
            if span is None:
                return None
            start, end, digest = span
            fh.seek(table[1] + start)
            line = fh.read(max(end - start, 0))
    except OSError:
        _read_index()  # (a file that cannot be opened is not tried again)
        return None
    return line if end >= start and len(line) == end - start and _digest(line) == digest else None


def _table_fit(key: tuple) -> "_Fit | str | None":
    """The shipped fit of a structure, its reason text when the structure is known not to fit,
    or None when the table does not have it (or its entry is damaged)."""
    raw = _table_line(structure_hash(key))
    if raw is None:
        return None
    try:
        return _entry_fit(raw, [kind for _, kind, _ in key[-1]])  # (key[-1]: the structure's variables)
    except Exception:  # noqa: BLE001 - a damaged entry whose digest still matched: fitted instead
        return None


def _entry_text(fit: "_Fit", n_var: int) -> str:
    """A fit as its table entry (the text of a JSON string, :func:`_entry_fit` reads it): fields
    ``n_var low num_powers den_powers exps k_den k_num coefficients`` apart by one space, the
    powers comma-separated, ``exps`` the ``(M, n_var)`` exponents variable by variable (one digit
    each: the rows of :attr:`_Fit.exps_ratio` without their signs), and ``coefficients`` the
    nonzero entries of den ``(M, k_den)`` then num ``(M, k_num)``, each with its highest power
    first (the layout :meth:`Expansion.dense_log` multiplies with): base64 of their values
    (little-endian float64: the very bits) followed by their flat indices (little-endian int32)."""
    import binascii

    exps = fit.exps
    if exps.size and (exps.min() < 0 or exps.max() > 9):  # pragma: no cover - degrees are op-amp counts
        raise ValueError("an exponent beyond one digit")
    flat = np.concatenate([fit.den[:, ::-1].reshape(-1), fit.num[:, ::-1].reshape(-1)])
    nz = np.flatnonzero(flat)
    blob = flat[nz].astype("<f8").tobytes() + nz.astype("<i4").tobytes()
    return " ".join([str(n_var), str(fit.low), ",".join(map(str, fit.num_powers)), ",".join(map(str, fit.den_powers)),
                     "".join(str(int(e)) for e in exps.T.reshape(-1)), str(fit.den.shape[1]), str(fit.num.shape[1]),
                     binascii.b2a_base64(blob, newline=False).decode("ascii")])


def _entry_fit(raw: bytes, kinds: list[str] | tuple[str, ...]) -> "_Fit | str | None":
    """The fit of a table entry's bytes (a JSON string: :func:`_entry_text`, or ``"unavailable:
    <reason>"``), its reason text, or None when it is not an entry of a structure of variables
    of these ``kinds`` (:attr:`Variable.kind`); raises on most else (the entry's digest has already told that its bytes are the
    ones written). Bytes operations only: no JSON parse but for a reason text."""
    import binascii

    if raw.startswith(b'"unavailable: '):
        import json

        return json.loads(raw)[len("unavailable: "):]
    if not (len(raw) > 2 and raw[0] == raw[-1] == 34):  # '"'
        return None
    n, low, num_powers, den_powers, digits, k_den, k_num, coefficients = raw[1:-1].split(b" ")
    n_var = len(kinds)
    if int(n) != n_var or not digits.isdigit() or len(digits) % n_var:  # (bytes: ASCII digits only, not empty)
        return None
    exps_t = (np.frombuffer(digits, dtype=np.uint8).astype(float) - 48.0).reshape(n_var, -1)
    rows = exps_t.shape[1]
    k_den, k_num = int(k_den), int(k_num)
    blob = binascii.a2b_base64(coefficients, strict_mode=True)
    count, rest = divmod(len(blob), 12)
    if rest:
        return None
    both = np.zeros(rows * (k_den + k_num))
    both[np.frombuffer(blob, dtype="<i4", offset=8 * count)] = np.frombuffer(blob, dtype="<f8", count=count)
    den_dense, num_dense = both[: rows * k_den].reshape(rows, k_den), both[rows * k_den :].reshape(rows, k_num)
    # (ascending views of the highest-first blocks: an expansion at unit values uses the blocks as they are)
    return _fit_of(exps_t, kinds, den_dense[:, ::-1], num_dense[:, ::-1], int(low),
                   (tuple(map(int, num_powers.split(b","))), tuple(map(int, den_powers.split(b",")))))


def table_entry(netlist: Netlist, opamp: OpAmpModel = IDEAL) -> tuple[str, str]:
    """``(hash, entry)`` of a netlist's structure for the shipped table: its fit, computed and
    verified now, as :func:`_entry_text` (``"unavailable: <reason>"`` when it does not fit)."""
    variables = circuit_variables(netlist, opamp)
    key = _structure_key(netlist, variables)
    sizes = [v.degree + 1 for v in variables]
    try:
        if math.prod(sizes) > MAX_POINTS:
            raise ExpansionUnavailable(f"{math.prod(sizes)} integer points needed, at most {MAX_POINTS}")
        fit = _structural_fit(netlist, variables, opamp, sizes)
        saved, _FITS[key] = _FITS.get(key), fit
        try:
            Expansion(_unit_netlist(netlist), opamp, w_ref=1.0)._verify()
        finally:
            if saved is None:
                del _FITS[key]
            else:
                _FITS[key] = saved
    except ExpansionUnavailable as exc:
        return structure_hash(key), f"unavailable: {exc}"
    return structure_hash(key), _entry_text(fit, len(variables))


def table_text(entries: dict[str, str]) -> str:
    """The table file's text (valid JSON): the stamp, the index of byte offsets, then one entry per
    line, sorted by hash (the layout :func:`_read_index` and :func:`_table_line` read)."""
    import json

    body, index, at = [], [], 0
    names = sorted(entries)
    for k, name in enumerate(names):
        obj = json.dumps(entries[name]).encode()
        head = f'"{name}": '.encode()
        start = at + len(head)
        if len(name) != 20 or name.strip("0123456789abcdef"):  # pragma: no cover - structure_hash's
            raise ValueError(f"not a table name: {name!r}")
        index.append(f"{name}:{start:08x}:{start + len(obj):08x}:{_digest(obj)};")
        line = head + obj + (b"," if k < len(names) - 1 else b"") + b"\n"
        body.append(line.decode())
        at += len(line)
    header = ["{\n", f'"stamp": {json.dumps(_table_stamp(), sort_keys=True)},\n', f'"index": "{"".join(index)}",\n']
    return "".join(header + body) + "}\n"


def _unit_netlist(netlist: Netlist) -> Netlist:
    """The same circuit with every part at 1 (ohm, henry, farad) and a present winding resistance
    at 1 ohm: natural frequencies near 1 rad/s, where the solver is well conditioned."""
    from dataclasses import replace

    elements = tuple(
        e if e.kind == "opamp" else replace(e, value=1.0, series_resistance=1.0 if e.series_resistance > 0 else 0.0)
        for e in netlist.elements
    )
    return replace(netlist, elements=elements)


def _structure_key(netlist: Netlist, variables: tuple[Variable, ...]) -> tuple:
    """:func:`_keyed` of a netlist with these ``variables``."""
    return _keyed(netlist, [(v.name, v.kind, v.degree) for v in variables])


def _structural_fit(netlist: Netlist, variables: tuple[Variable, ...], opamp: OpAmpModel, sizes: list[int]) -> _Fit:
    n_var = len(sizes)
    grid = np.indices(sizes).reshape(n_var, -1).T.astype(float)  # (P, n_var), integer points
    values = np.column_stack([v.stamped(grid[:, j]) for j, v in enumerate(variables)])
    system = _system_for(netlist, variables, values, opamp)
    k = _degree_bound(system) + 1
    s, undo = _circle(k)  # the circle bandsmith.solver.rational samples (no sample on a real pole)
    a = system.matrix(s)  # (P, k, n, n)
    den_v = np.linalg.det(a)
    a[..., :, system.output_index] = 0.0
    a[..., system.layout.source_row, system.output_index] = 1.0
    num_v = np.linalg.det(a)  # Cramer's rule: the output column replaced by the source vector
    den_c = (np.fft.fft(den_v, axis=1) / k * undo).real  # ascending powers of s
    num_c = (np.fft.fft(num_v, axis=1) / k * undo).real
    both = np.concatenate([den_c, num_c], axis=1).reshape(*sizes, 2 * k)
    for axis, size in enumerate(sizes):  # per-axis Vandermonde: values at t = 0..d → powers
        vinv = np.linalg.inv(np.vander(np.arange(size, dtype=float), size, increasing=True))
        both = np.moveaxis(np.tensordot(vinv, both, axes=(1, axis)), 0, axis)
    both = both.reshape(-1, 2 * k)
    scale = np.max(np.abs(both))
    if not scale > 0:
        raise ExpansionUnavailable("the determinant vanishes identically")
    both = np.where(np.abs(both) <= _ZERO * scale, 0.0, both)
    keep = np.any(both != 0.0, axis=1)
    exps = np.indices(sizes).reshape(n_var, -1).T[keep]  # (M, n_var) exponents
    coef = both[keep]
    den, num = coef[:, :k], coef[:, k:]
    # Structural trimming: powers of s absent from every monomial.
    den_pw = np.flatnonzero(np.any(den != 0, axis=0))
    num_pw = np.flatnonzero(np.any(num != 0, axis=0))
    if den_pw.size == 0 or num_pw.size == 0:
        raise ExpansionUnavailable("no transfer from the input to the output")
    low = int(min(den_pw[0], num_pw[0]))  # a common factor s^low cancels
    return _fit_of(np.ascontiguousarray(exps.T, dtype=float), tuple(v.kind for v in variables), den[:, low : den_pw[-1] + 1], num[:, low : num_pw[-1] + 1], low)


def _fit_of(exps_t: np.ndarray, kinds: list[str] | tuple[str, ...], den: np.ndarray, num: np.ndarray, low: int, powers: tuple | None = None) -> _Fit:
    """A :class:`_Fit` from its exponents transposed, as floats ``(n_var, M)`` C-contiguous (a
    new array: its inverse variables' rows are negated in place), the variables' kinds, its
    trimmed coefficients ``(M, ·)`` (ascending powers of ``s`` from ``s^low``), ``low``, and the
    powers present in the numerator and the denominator when known (the columns with a nonzero
    coefficient)."""
    if powers is None:
        powers = tuple(tuple(int(p) for p in np.flatnonzero(np.any(c != 0, axis=0))) for c in (num, den))
    num_powers, den_powers = (tuple(p) for p in powers)
    # per variable: its sign (−1 for an inverse one) and the log ratio of an absent stamp (_LOG_ZERO · sign)
    signs = np.array([(-1.0, -_LOG_ZERO) if k in _INVERSE_KINDS else (1.0, _LOG_ZERO) for k in kinds])
    np.multiply(exps_t, signs[:, :1], out=exps_t)
    absent_log = signs[:, 1]
    exps_t.setflags(write=False)  # shared by every expansion of the structure
    absent_log.setflags(write=False)
    return _Fit(exps_ratio=exps_t, absent_log=absent_log, den=den, num=num, low=low, num_powers=num_powers, den_powers=den_powers)


# Up to this batch size the monomials are exp(exponents @ log stamps) and the coefficients one
# product with the term matrix; larger batches (Monte Carlo) use the loops, which stay clear of
# BLAS threads.
SMALL_BATCH = 2048
# log of a zero stamp: exp(-1e5·e) underflows to exactly 0 for every exponent e ≥ 1, while
# 0·(-1e5) = 0 for the monomials without it.
_LOG_ZERO = -1e5


def _terms(coef: np.ndarray, pattern: np.ndarray, powers: tuple[int, ...]) -> list[tuple[int, int, float]]:
    """``(row, monomial, coefficient)`` where the structural fit ``pattern`` is nonzero, row =
    index in ``powers``; ``coef`` is the same fit scaled to the nominal values."""
    return [(r, int(m), float(coef[m, p])) for r, p in enumerate(powers) for m in np.flatnonzero(pattern[:, p])]


class Expansion:
    """The coefficients of ``N`` and ``D`` of a netlist as polynomials in its parameters.

    Parameters
    ----------
    netlist : Netlist
        The circuit (its values are the nominal ones).
    opamp : OpAmpModel
        Ideal, or single-pole with the nominal GBW and A0.
    w_ref : float
        Normalising angular frequency (rad/s) of the returned :class:`~bandsmith.solver.rational.Rational`.

    Raises
    ------
    ExpansionUnavailable
        When the netlist has too many parameters (more than :data:`MAX_POINTS` integer points) or
        the expansion disagrees with the solver.
    """

    def __init__(self, netlist: Netlist, opamp: OpAmpModel = IDEAL, *, w_ref: float):
        variables = circuit_variables(netlist, opamp)
        self._setup(netlist, None, opamp, w_ref, variables, _structure_key(netlist, variables))

    @classmethod
    def _at_unit(cls, netlist: Netlist, opamp: OpAmpModel, variables: tuple[Variable, ...], key: tuple) -> "Expansion":
        """``Expansion(_unit_netlist(netlist), opamp, w_ref=1.0)`` from ``netlist``'s own variables
        and structure key (the unit netlist's are the same with the parts at 1); the unit netlist
        itself is built only when needed (a fit, a check)."""
        self = cls.__new__(cls)
        unit = tuple(Variable(v.name, v.kind, 1.0, v.degree) if v.kind in ("R", "C", "L", "RS") else v for v in variables)
        self._setup(None, netlist, opamp, 1.0, unit, key)
        return self

    @property
    def netlist(self) -> Netlist:
        """The circuit at the nominal values."""
        if self._netlist is None:
            self._netlist = _unit_netlist(self._unit_of)
        return self._netlist

    def _setup(self, netlist, unit_of, opamp, w_ref, variables, key) -> None:
        self._netlist, self._unit_of = netlist, unit_of
        self.opamp = opamp
        self.w_ref = float(w_ref)
        self.variables = variables
        self.names = tuple(v.name for v in self.variables)
        self.column = {name: j for j, name in enumerate(self.names)}  # a variable's column by name
        self._unit_values = [v.value for v in self.variables]  # (what log_ratios_of divides by)
        fit = _known_fit(key)
        if fit is None:
            sizes = [v.degree + 1 for v in self.variables]
            if math.prod(sizes) > MAX_POINTS:
                raise ExpansionUnavailable(f"{math.prod(sizes)} integer points needed, at most {MAX_POINTS}")
            _FITS[key] = fit = _structural_fit(self.netlist, self.variables, opamp, sizes)
            # Checked once per structure, at unit values (well conditioned for the solver it is
            # checked against): the integer fit does not depend on the values.
            try:
                Expansion(_unit_netlist(self.netlist), opamp, w_ref=1.0)._verify()
            except ExpansionUnavailable:
                del _FITS[key]
                raise
        self._scale(fit)

    # -- building -------------------------------------------------------------------------------
    def _scale(self, fit: "_Fit") -> None:
        """Scale the structural coefficients to the nominal values and to ``p = s/w_ref``."""
        den, num, low = fit.den, fit.num, fit.low
        # in logs, so that nothing overflows; nothing to scale when w_ref = 1 and every stamp is 1
        # (unit_expansion's: its log stamps are all 0)
        if self.w_ref != 1.0 or any(v.log_stamp for v in self.variables):
            log_stamp = np.array([v.log_stamp for v in self.variables])
            base = fit.exps @ log_stamp  # (M,)
            log_w = math.log(self.w_ref)
            lden = base[:, None] + (np.arange(den.shape[1]) + low)[None, :] * log_w
            lnum = base[:, None] + (np.arange(num.shape[1]) + low)[None, :] * log_w
            shift = np.max(np.where(den != 0, lden, -np.inf))
            den = np.where(den != 0, den * np.exp(np.minimum(lden - shift, 700.0)), 0.0)
            num = np.where(num != 0, num * np.exp(np.minimum(lnum - shift, 700.0)), 0.0)
        #: Powers of p present in the numerator and denominator (ascending).
        self.num_powers = fit.num_powers
        self.den_powers = fit.den_powers
        self._fit = fit
        self._num_scaled, self._den_scaled = num, den
        self._loops = None  # the monomials' factors and terms of the large-batch loops, made when first needed
        self._plan: _CoefficientPlan | None = None
        self._picks = None  # (:meth:`_opamp_picks`, made when first asked)
        self._ideal: _IdealPart | None = None  # (:meth:`ideal_part`, made when first asked)
        # For :meth:`dense_log`: exponents over the log *ratios* (an inverse parameter's stamp is
        # the reciprocal: its row negated), the log ratio that makes a stamp absent (the fit's,
        # shared: read only), and term matrices onto every power of p, highest first.
        self._exps_ratio = fit.exps_ratio
        self._absent_log = fit.absent_log
        # (M, top + 1): every power of p, highest first (a power absent from the fit is a zero column)
        self._num_dense = np.ascontiguousarray(num[:, ::-1])
        self._den_dense = np.ascontiguousarray(den[:, ::-1])
        # the dense columns of the powers present (lowest first), for :meth:`coefficients`
        self._num_cols = [self.num_powers[-1] - p for p in self.num_powers]
        self._den_cols = [self.den_powers[-1] - p for p in self.den_powers]

    def _verify(self) -> None:
        # the unit values and three members within ±10 % of them, spread by the golden-ratio
        # sequence (deterministic; numpy.random would cost a process's first analysis 8 ms to import)
        n = len(self.variables)
        spread = -0.1 + 0.2 * ((np.arange(1, 3 * n + 1) * 0.6180339887498949) % 1.0).reshape(3, n)
        lr = np.vstack([np.zeros(n), spread])
        for j, v in enumerate(self.variables):
            if v.kind == "a0":
                lr[:, j] = 0.0
        mine = self.rational(np.exp(lr))
        values = np.exp(lr) * np.array([v.value for v in self.variables])
        # at unit values (within 10 %) the natural frequencies are near w_ref = 1 rad/s: sample there
        # (no generalised eigenvalues, so no scipy.linalg in a process's first analysis)
        ref = rational_from_system(_system_for(self.netlist, self.variables, values, self.opamp), self.w_ref, circle_w=self.w_ref)
        p = 1j * np.geomspace(0.2, 5.0, 9)
        a, b = mine.at_s(p * self.w_ref), ref.at_s(p * self.w_ref)
        err = np.max(np.abs(a - b)) / max(np.max(np.abs(b)), 1e-300)
        if not err <= _VERIFY_RTOL:
            raise ExpansionUnavailable(f"disagrees with the solver by {err:.2g}")

    # -- use ----------------------------------------------------------------------------------
    def monomial_terms(self) -> tuple[list, list, list]:
        """The monomials and where they go, for loops over large batches (made when first asked):
        ``(factors, num_terms, den_terms)``; ``factors[m]`` is monomial ``m`` as ``((variable,
        exponent), …)`` (nonzero exponents, variables ascending), each term ``(row, m, coefficient)``
        adds ``coefficient · monomial m`` to the coefficient of ``num_powers[row]`` (or ``den_powers``)."""
        if self._loops is None:
            self._loops = (
                [tuple((int(i), int(e)) for i, e in enumerate(row) if e) for row in self._fit.exps],
                _terms(self._num_scaled, self._fit.num, self.num_powers),
                _terms(self._den_scaled, self._fit.den, self.den_powers),
            )
        return self._loops

    def coefficients(self, ratios: np.ndarray, *, absent: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
        """Numerator and denominator coefficients in ``p = s/w_ref`` for a batch of values.

        Parameters
        ----------
        ratios : ndarray
            Shape ``(B, len(variables))``: each parameter's value over its nominal value (a part's
            value, the GBW, the open-loop gain).
        absent : ndarray of bool, optional
            Same shape: True where that parameter's stamp is zero in that member (an open
            resistor, an infinite GBW or A0: the ideal op-amp); its ratio is then ignored.

        Returns
        -------
        num, den : ndarray
            Shape ``(len(num_powers), B)`` and ``(len(den_powers), B)`` — *lowest* power first and
            the batch last (the layout the loops below fill fastest); a member with a ratio that
            is not a finite number above zero is NaN throughout.

        Notes
        -----
        Up to :data:`SMALL_BATCH` members two small products (:meth:`dense_log`); above, loops over
        the monomials with whole-batch array operations (:class:`_CoefficientPlan`: each distinct
        prefix of factors multiplied once), not matrix products: a BLAS product with an inner size
        of five runs slower than the loop and, on a busy machine, its worker threads slow it down
        tenfold.
        """
        r = np.asarray(ratios, dtype=float)
        b = r.shape[0]
        if b <= SMALL_BATCH:  # two small products (dense_log): fewer array calls than the loops below
            with np.errstate(divide="ignore", invalid="ignore"):
                num, den = self.dense_log(np.log(r), absent=absent)
            return num[:, self._num_cols].T, den[:, self._den_cols].T
        if self._plan is None:
            self._plan = _CoefficientPlan(self)
        return self._plan(r, absent)

    def dense(
        self, ratios: np.ndarray, *, absent: np.ndarray | None = None, w_ref: float | None = None
    ) -> tuple[np.ndarray, np.ndarray]:
        """Numerator and denominator coefficients, batch first and every power of ``p = s/w_ref``
        present, highest first: shapes ``(B, num_powers[-1] + 1)`` and ``(B, den_powers[-1] + 1)``.

        ``ratios`` and ``absent`` as :meth:`coefficients` takes them; ``w_ref`` (rad/s) defaults
        to the expansion's own. A member with a ratio that is not a finite number above zero is
        NaN throughout. Up to :data:`SMALL_BATCH` members this is ``exp(log ratios @ exponents)``
        and one product per polynomial, about a dozen array calls in all.
        """
        r = np.asarray(ratios, dtype=float)
        b = r.shape[0]
        if b > SMALL_BATCH:
            num_c, den_c = self.coefficients(r, absent=absent)
            num = np.zeros((b, self.num_powers[-1] + 1))
            den = np.zeros((b, self.den_powers[-1] + 1))
            num[:, [num.shape[1] - 1 - p for p in self.num_powers]] = num_c.T
            den[:, [den.shape[1] - 1 - p for p in self.den_powers]] = den_c.T
        else:
            with np.errstate(divide="ignore", invalid="ignore"):
                lr = np.log(r)
            num, den = self.dense_log(lr, absent=absent)
        return self._in_p(num, den, w_ref)

    def _in_p(self, num: np.ndarray, den: np.ndarray, w_ref: float | None) -> tuple[np.ndarray, np.ndarray]:
        """Dense coefficients in this expansion's ``p`` taken, in place, to ``p = s/w_ref``
        (``c·(s/w_e)^n = c·k^n·(s/w_ref)^n``, ``k = w_ref/w_e``); unchanged for None."""
        if w_ref is not None and w_ref != self.w_ref:
            k = w_ref / self.w_ref
            num *= k ** np.arange(num.shape[1] - 1, -1, -1.0)
            den *= k ** np.arange(den.shape[1] - 1, -1, -1.0)
        return num, den

    def log_ratios_of(self, values) -> np.ndarray:
        """The natural logs of a circuit's own values over this expansion's, from the variables'
        values (SI units, in this expansion's order, as :func:`unit_expansion_values` gives them
        beside it): ``(n_var,)``, what :meth:`dense_log` and :meth:`opamp_terms` take for one
        member."""
        return np.log([x / u for x, u in zip(values, self._unit_values)])

    def dense_log(self, log_ratios: np.ndarray, *, absent: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
        """:meth:`dense` from the natural logs of the ratios (any batch size, the expansion's
        ``w_ref``): ``exp(log ratios @ exponents)`` and one product per polynomial. A stack of
        batches, ``(G, B, n_var)`` (and ``absent`` likewise), gives ``(G, B, k)``: each batch's
        products taken as alone."""
        lr = log_ratios if absent is None else np.where(absent, self._absent_log, log_ratios)
        return _checked_products(lr, self._exps_ratio, self._num_dense, self._den_dense)  # an absent stamp gives exactly 0

    @property
    def dense_widths(self) -> tuple[int, int]:
        """How many coefficients :meth:`dense_log` gives a member's numerator and denominator
        (every power of p up to the highest present)."""
        return self._num_dense.shape[1], self._den_dense.shape[1]

    def same_products(self, other: "Expansion") -> bool:
        """True where ``other`` gives the same dense coefficients as this one, number for number,
        for the same log ratios (:meth:`dense_log`, :meth:`dense_log_finite_picked_into`): the same variables
        (names, kinds, units and degrees), the same ``w_ref``, exponents and term matrices (two
        circuits whose ideal transfer functions are one function of their parts, say)."""
        return other is self or (
            self.variables == other.variables and self.w_ref == other.w_ref
            and np.array_equal(self._exps_ratio, other._exps_ratio)
            and np.array_equal(self._num_dense, other._num_dense) and np.array_equal(self._den_dense, other._den_dense))

    def monomial_supports(self) -> tuple[tuple[int, ...], ...]:
        """Per monomial, the variables (columns of the log ratios :meth:`dense_log` takes) whose
        exponent in it is not zero, in order."""
        return tuple(tuple(np.flatnonzero(col).tolist()) for col in self._exps_ratio.T)

    def dense_log_finite_picked_into(self, log_ratios: np.ndarray, picks: np.ndarray, num: np.ndarray, den: np.ndarray) -> None:
        """:meth:`dense_log` of a batch whose log ratios are all finite (no absent stamp, no row
        looked at for a value that is not a number: a search over many combinations checks its
        few offered values' logs instead), its monomials taken from those of a few rows: the
        monomials of the rows ``log_ratios`` (``(R, n_var)``, or a stack ``(G, R, n_var)``),
        ``exp(log ratios @ exponents)``, then each member's from them by ``picks`` (``(B, M)``
        flat positions in a row's ``(R, M)`` monomials, :func:`numpy.take`), onto every power
        of p into ``num`` and ``den`` (C-contiguous, ``(B, k)`` or ``(G, B, k)``: the rows of a
        batch joined with others, say). Where every member's monomial is picked from a row with
        its log ratios on the monomial's variables (:meth:`monomial_supports`), the numbers of
        dense_log of the members' own rows: the other terms of its sum are ±0 and add nothing,
        numpy's exp maps each number alone, and a product given its output runs the same
        product. Floating-point warnings are the caller's (an exponential may overflow)."""
        mono = log_ratios @ self._exps_ratio
        np.exp(mono, out=mono)
        picked = mono.take(picks) if mono.ndim == 2 else mono.reshape(mono.shape[0], -1).take(picks, axis=1)
        np.matmul(picked, self._num_dense, out=num)
        np.matmul(picked, self._den_dense, out=den)

    def opamp_terms(self, log_ratios: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
        """The transfer function of one member as a polynomial in the op-amp stamp its ``m``
        op-amps share, ``x = −(1/A0 + s/ω_t)``: ``D = Σ_j x^j·D_j`` and ``N = Σ_j x^j·N_j``.

        Each op-amp stamps ``−x`` into one entry of the pencil, so ``D`` is a polynomial of degree
        ``m`` in ``x`` alone, and ``D_j`` is ``(−1)^j`` times the part of ``D`` in ``(1/A0)^j`` with no
        ``1/ω_t``: the monomials of that exponent pair, summed (no cancellation between powers, as
        a fit over several values of ``x`` would have). ``log_ratios`` ``(n_var,)`` as
        :meth:`dense_log` takes them (the op-amp's columns are ignored); ``(G, n_var)`` for
        several members at once gives ``(G, m + 1, k)`` arrays, each member's products taken as a
        stack of one-row products (the numbers it has alone, bit for bit: tested).

        Returns
        -------
        num_terms, den_terms : ndarray
            ``N_j`` and ``D_j``, ``j = 0 … m``, the rows of an ``(m + 1, k)`` array each, in the
            expansion's ``p``, highest power first (:class:`bandsmith.solver.rational.AmpFamily`'s
            terms); None without op-amp variables.
        """
        picks = self._opamp_picks()
        if picks is None:
            return None
        keep, signs = picks
        kept = np.where(keep, log_ratios, 0.0)
        if kept.ndim == 2:
            kept = kept[:, None, :]  # (G, 1, n_var): one product per member
        with np.errstate(invalid="ignore", over="ignore"):
            mono = np.exp(kept @ self._exps_ratio)  # op-amp stamps at 1
        weighted = signs * mono  # (m + 1, M): row j the monomials of (1/A0)^j, signed (−1)^j
        return weighted @ self._num_dense, weighted @ self._den_dense

    def ideal_part(self) -> "_IdealPart | None":
        """The circuit with ideal op-amps (``1/A0 = 1/ω_t = 0``) from this expansion with the
        op-amps' stamps: the monomials with no op-amp stamp (``N_0`` and ``D_0`` of
        :meth:`opamp_terms`), for log ratios over this expansion's variables (made when first
        asked; None without op-amp variables). Its :meth:`_IdealPart.dense_log` is :meth:`dense_log`
        with every op-amp stamp absent, the same polynomials summed over those few monomials only:
        one table entry serves a circuit's ideal members and its op-amp family."""
        if self._ideal is None:
            picks = self._opamp_picks()
            if picks is None:
                return None
            sel = picks[1][0].nonzero()[0]  # row 0: the monomials of (1/A0)^0 with no 1/ω_t
            num, den = self._num_dense[sel], self._den_dense[sel]
            # the leading powers only the op-amps' stamps reach: zero in every kept monomial
            lead_n, lead_d = (first_kept(c.any(axis=0).tolist()) for c in (num, den))
            self._ideal = _IdealPart(np.ascontiguousarray(self._exps_ratio[:, sel]), num[:, lead_n:].copy(), den[:, lead_d:].copy())
        return self._ideal

    def _opamp_picks(self):
        """For :meth:`opamp_terms`: the mask of the variables that are not the op-amp's, and a
        ``(m + 1, M)`` matrix with ``(−1)^j`` in row ``j`` at the monomials with ``1/A0`` to the
        power ``j`` and no ``1/ω_t``, zero elsewhere (made when first asked)."""
        if self._picks is None:
            kinds = [v.kind for v in self.variables]
            if "gbw" not in kinds or "a0" not in kinds:
                self._picks = (None,)
            else:
                exps_ratio = self._fit.exps_ratio  # (negated rows: the op-amp's stamps are reciprocals)
                gbw, a0 = exps_ratio[kinds.index("gbw")], exps_ratio[kinds.index("a0")]
                powers = range(self.variables[kinds.index("a0")].degree + 1)
                # (columns made from lists: a process's first analysis pays for each distinct array call)
                signs = np.where((gbw == 0) & (a0 == np.array([[-float(j)] for j in powers])), np.array([[(-1.0) ** j] for j in powers]), 0.0)
                self._picks = (np.array([k not in ("gbw", "a0") for k in kinds]), signs)
        return None if self._picks[0] is None else self._picks

    def rational(self, ratios: np.ndarray, *, w_ref: float | None = None) -> Rational:
        """Transfer functions for a batch of values given as ratios to the nominal ones.

        Parameters
        ----------
        ratios : ndarray
            Shape ``(B, len(variables))``, as :meth:`coefficients` takes.
        w_ref : float, optional
            Normalise to ``p = s/w_ref`` (rad/s) instead of the expansion's own ``w_ref``.

        Returns
        -------
        Rational
            Coefficients in ``p = s/w_ref``, highest power first, each member scaled so that its
            largest denominator coefficient is ±1.
        """
        return self._rational(*self.dense(ratios, w_ref=w_ref), w_ref)

    def _rational(self, num: np.ndarray, den: np.ndarray, w_ref: float | None) -> Rational:
        """Dense coefficients in ``p = s/w_ref`` as a :class:`Rational`, each member scaled so that
        its largest denominator coefficient is ±1."""
        w = self.w_ref if w_ref is None else float(w_ref)
        with np.errstate(invalid="ignore", divide="ignore"):
            scale = largest_in_rows(den)
            return Rational(num / scale, den / scale, np.full(num.shape[0], w))

    @property
    def pure_bandpass(self) -> bool:
        """True when every member is ``b1·p / (a2·p² + a1·p + a0)``, a second-order band-pass."""
        return self.num_powers == (1,) and self.den_powers == (0, 1, 2)


class _IdealPart(NamedTuple):
    """:meth:`Expansion.ideal_part`: the exponents over the log ratios ``(n_var, M0)`` of the
    monomials with no op-amp stamp, and their terms onto every power of p, highest first
    (``(M0, k)``, the leading powers no such monomial reaches dropped)."""

    exps_ratio: np.ndarray
    num_dense: np.ndarray
    den_dense: np.ndarray

    def dense_log(self, log_ratios: np.ndarray, *, absent: None = None) -> tuple[np.ndarray, np.ndarray]:
        """:meth:`Expansion.dense_log` of the circuit with ideal op-amps (the op-amps' columns of
        ``log_ratios`` are not read; ``absent`` is there for the signature only: None)."""
        return _checked_products(log_ratios, self.exps_ratio, self.num_dense, self.den_dense)


def _products(log_ratios: np.ndarray, exps_ratio: np.ndarray, num_dense: np.ndarray, den_dense: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``exp(log ratios @ exponents)``, the monomials ``(B, M)``, onto every power of p by the term
    matrices, highest first: a batch's numerators and denominators (floating-point warnings are
    the caller's)."""
    mono = np.exp(log_ratios @ exps_ratio)
    return mono @ num_dense, mono @ den_dense


def _checked_products(log_ratios: np.ndarray, exps_ratio: np.ndarray, num_dense: np.ndarray, den_dense: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`_products` (:meth:`Expansion.dense_log`'s), a member with a log ratio that is not a
    finite number NaN throughout (overflow and invalid warnings silenced: such a member is not
    looked at further)."""
    with np.errstate(invalid="ignore", over="ignore"):
        finite = np.isfinite(log_ratios)
        num, den = _products(log_ratios, exps_ratio, num_dense, den_dense)
    if not finite.all():  # (the rows looked at only then: a reduction along rows of a few costs)
        bad = ~finite.all(axis=-1)
        num[bad] = np.nan
        den[bad] = np.nan
    return num, den


_UNIT: dict[tuple, "Expansion"] = {}


def unit_expansion_values(netlist: Netlist, opamp: OpAmpModel = IDEAL, *, fit: bool = True) -> tuple[Expansion, list[float]]:
    """:func:`unit_expansion`'s expansion, and the values of ``netlist``'s own variables (in SI
    units, in the expansion's order) as plain floats instead of :class:`Variable` records: what
    :meth:`Expansion.log_ratios_of` takes. Once the structure's expansion is kept, no record is
    made. Raises :class:`ExpansionUnavailable` as :func:`unit_expansion` does."""
    _, values, structure = _values_and_key(netlist, opamp)
    return _kept_unit(netlist, opamp, structure, fit), values


def unit_expansion(netlist: Netlist, opamp: OpAmpModel = IDEAL, *, fit: bool = True) -> tuple[Expansion, tuple[Variable, ...]]:
    """The expansion of this circuit's structure at unit values (1 Ω, 1 H, 1 F, and ``opamp``'s
    GBW and A0) and ``w_ref = 1`` rad/s, kept per structure; and ``netlist``'s own variables.

    Its ratios are then the values themselves (over ``opamp``'s for the op-amp variables), so one
    expansion serves every set of values of a circuit without rescaling. Raises
    :class:`ExpansionUnavailable` as :class:`Expansion` does, and with ``fit=False`` also where
    the structure would have to be fitted now (it is neither fitted yet nor in the shipped table:
    for a caller with a cheaper way than a fit of several op-amps' stamps, up to a second).
    """
    named, values, structure = _values_and_key(netlist, opamp)
    return _kept_unit(netlist, opamp, structure, fit), _variables(named, values)


def _kept_unit(netlist: Netlist, opamp: OpAmpModel, structure: tuple, fit: bool) -> Expansion:
    """The kept unit expansion of ``netlist``'s structure, whose key :func:`_values_and_key`
    made (made, and kept, where it is not yet): :func:`unit_expansion`'s."""
    key = (structure, opamp)
    exp = _UNIT.get(key)
    if exp is None:
        if not fit and _known_fit(structure) is None:
            raise ExpansionUnavailable("not fitted yet")
        exp = Expansion._at_unit(netlist, opamp, circuit_variables(netlist, opamp), structure)
        _UNIT[key] = exp
    return exp


def _known_fit(key: tuple) -> "_Fit | None":
    """A structure's fit where it is made already or shipped (then kept), None where neither;
    :class:`ExpansionUnavailable` with the table's reason where the structure is known not to
    fit."""
    fit = _FITS.get(key)
    if fit is None:
        shipped = _table_fit(key)
        if isinstance(shipped, str):
            raise ExpansionUnavailable(shipped)
        if shipped is not None:  # computed and verified when the table was written
            _FITS[key] = fit = shipped
    return fit


class _CoefficientPlan:
    """:meth:`Expansion.coefficients` for large batches: monomials shared, never all held at once.

    The expansion's monomials come in lexicographic order of their exponents, so those that
    begin with the same factors are neighbours: walked in that order with a stack of partial
    products, every distinct prefix is multiplied once (for the state-variable circuit's 205 monomials
    with a finite op-amp: 246 products instead of 879 with every op-amp parameter spread, 114
    instead of 747 with A0 held), and each monomial is added into its
    coefficient as soon as it is formed. Each product and each sum is the one the expansion
    computes, in the same order, so the coefficients are bit-identical (a factor of an op-amp
    parameter at exactly its nominal value, 1, is left out: it multiplies exactly); the work falls
    to about a quarter and the memory to a few arrays of the batch.

    Made from the expansion's monomial factors and terms (:meth:`Expansion.monomial_terms`), once
    per expansion.
    """

    def __init__(self, expansion):
        self.variables = expansion.variables
        self.n_num = len(expansion.num_powers)
        self.n_den = len(expansion.den_powers)
        factors, num_terms, den_terms = expansion.monomial_terms()
        terms: list[list] = [[] for _ in factors]
        for which, tlist in ((0, num_terms), (1, den_terms)):
            for row, m, c in tlist:
                terms[m].append((which, row, c))
        self.steps = [(tuple(f), t) for f, t in zip(factors, terms)]
        self.powers = sorted({(i, e) for f, _ in self.steps for i, e in f if e != 1})
        # the op-amp's parameters, often held at their nominal value (A0 always, the GBW without
        # a spread): a factor 1 multiplies exactly, so it is left out (steps by left-out set)
        self._opamp = [j for j, v in enumerate(self.variables) if v.kind in ("gbw", "a0")]
        self._steps_without: dict[frozenset, list] = {frozenset(): self.steps}

    def _steps(self, unit: frozenset) -> list:
        steps = self._steps_without.get(unit)
        if steps is None:
            steps = [(tuple(f for f in factors if f[0] not in unit), t) for factors, t in self.steps]
            self._steps_without[unit] = steps
        return steps

    def __call__(self, ratios: np.ndarray, absent: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
        """Numerator and denominator coefficients, ``(len(powers), B)``, lowest power first (the
        arguments and result of :meth:`Expansion.coefficients`)."""
        b = ratios.shape[0]
        q = np.array(ratios.T, dtype=float, order="C")  # (n_var, B)
        if absent is not None:
            q[np.asarray(absent).T] = 1.0
        bad = ~(np.isfinite(q) & (q > 0)).all(axis=0)
        for j, v in enumerate(self.variables):
            if v.inverse:
                np.divide(1.0, q[j], out=q[j])
        if absent is not None:
            q[np.asarray(absent).T] = 0.0  # an absent stamp: every monomial holding it is zero
        unit = frozenset(j for j in self._opamp if q[j].min() == 1.0 == q[j].max())
        pw = {(i, e): q[i] ** e for i, e in self.powers if i not in unit}
        outs = (np.zeros((self.n_num, b)), np.zeros((self.n_den, b)))
        tmp = np.empty(b)
        buffers: list[np.ndarray] = []
        stack: list[tuple[tuple, np.ndarray]] = []
        one = None
        for factors, terms in self._steps(unit):
            while stack and stack[-1][0] != factors[: len(stack[-1][0])]:
                stack.pop()
            for depth in range(len(stack[-1][0]) if stack else 0, len(factors)):
                i, e = factors[depth]
                if depth == 0:
                    node = q[i] if e == 1 else pw[(i, e)]
                else:  # one buffer per depth: a node replaces only nodes no longer on the stack
                    while len(buffers) < depth:
                        buffers.append(np.empty(b))
                    node = np.multiply(stack[-1][1], q[i] if e == 1 else pw[(i, e)], out=buffers[depth - 1])
                stack.append((factors[: depth + 1], node))
            if factors:
                node = stack[-1][1]
            else:
                if one is None:
                    one = np.ones(b)
                node = one
            for which, row, c in terms:
                out = outs[which][row]
                np.multiply(node, c, out=tmp)
                out += tmp
        num, den = outs
        if bad.any():
            num[:, bad] = np.nan
            den[:, bad] = np.nan
        return num, den
