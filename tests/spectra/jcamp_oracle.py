"""A slow, obvious JCAMP-DX ``(X++(Y..Y))`` decoder, character by character, written straight from
the standard (McDonald & Wilks, Appl. Spectrosc. 42 (1988) 151, section 5.4: AFFN, PAC, SQZ,
DIF, DUP and the Y check). The test oracle for the vectorised decoder in
``service.spectra.jcamp_asdf``; it shares no code with it.
"""

from __future__ import annotations

SQZ = {c: i for i, c in enumerate("@ABCDEFGHI")} | {c: -i for i, c in enumerate("abcdefghi", start=1)}
DIF = {c: i for i, c in enumerate("%JKLMNOPQR")} | {c: -i for i, c in enumerate("jklmnopqr", start=1)}
DUP = {c: i for i, c in enumerate("STUVWXYZs", start=1)}


class OracleError(Exception):
    pass


def _tokens(line: str) -> list[tuple[str, float]]:
    """(kind, value) with kind in num/sqz/dif/dup."""
    out: list[tuple[str, float]] = []
    kind: str | None = None
    sign = 1
    digits = ""

    def close() -> None:
        nonlocal kind, digits, sign
        if kind is not None:
            if not digits or digits == ".":
                raise OracleError(f"empty number in {line!r}")
            out.append((kind, sign * float(digits)))
        kind, digits, sign = None, "", 1

    for ch in line:
        if ch in " \t,":
            close()
        elif ch in "+-":
            close()
            kind, sign = "num", (-1 if ch == "-" else 1)
        elif ch in SQZ:
            close()
            kind, sign, digits = "sqz", (-1 if SQZ[ch] < 0 or ch in "abcdefghi" else 1), str(abs(SQZ[ch]))
        elif ch in DIF:
            close()
            kind, sign, digits = "dif", (-1 if ch in "jklmnopqr" else 1), str(abs(DIF[ch]))
        elif ch in DUP:
            close()
            kind, digits = "dup", str(DUP[ch])
        elif ch.isdigit() or ch == ".":
            if kind is None:
                kind = "num"
            digits += ch
        else:
            raise OracleError(f"bad character {ch!r}")
    close()
    return out


def decode(lines: list[str]) -> tuple[list[float], list[float], list[int]]:
    """(ordinates, abscissa of each line, index of the point each line's abscissa belongs to)."""
    ys: list[float] = []
    xs: list[float] = []
    idx: list[int] = []
    prev_ended_dif = False
    for line in lines:
        line = line.split("$$")[0].strip()
        if not line:
            continue
        toks = _tokens(line)
        if not toks or toks[0][0] != "num":
            raise OracleError("line must start with an abscissa")
        xs.append(toks[0][1])
        expanded: list[tuple[str, float]] = []
        for kind, v in toks[1:]:
            if kind == "dup":
                if not expanded:
                    raise OracleError("DUP with nothing before it")
                expanded.extend([expanded[-1]] * (int(v) - 1))
            else:
                expanded.append((kind, v))
        values: list[float] = []
        kinds: list[str] = []
        current = ys[-1] if ys else None
        for kind, v in expanded:
            if kind == "dif":
                if current is None:
                    raise OracleError("DIF with nothing before it")
                current = current + v
            else:
                current = v
            values.append(current)
            kinds.append(kind)
        if prev_ended_dif:
            if kinds[0] == "dif" or values[0] != ys[-1]:
                raise OracleError("Y check failed")
            idx.append(len(ys) - 1)
            values = values[1:]
        else:
            idx.append(len(ys))
        ys.extend(values)
        prev_ended_dif = bool(kinds) and kinds[-1] == "dif"
    return ys, xs, idx


def xydata_lines(text: str) -> list[str]:
    """The data lines after ``##XYDATA=`` up to the next record."""
    lines = text.replace("\r\n", "\n").rstrip("\x1a\n").split("\n")
    start = next(i for i, ln in enumerate(lines) if ln.upper().startswith("##XYDATA"))
    out = []
    for ln in lines[start + 1:]:
        if ln.lstrip().startswith("##"):
            break
        out.append(ln)
    return out
