"""Seeded mutations of the demo case files, for the fuzz test of ``anharmony check``.

Each mutant is a demo case with one to three edits of the kinds a careless or hostile user
makes: a value replaced by a hostile one (huge, tiny, negative, NaN, text, a tagged scalar, a
list or mapping where a number belongs), a line deleted, doubled, swapped or re-indented, a
key misspelt, the text cut short, a stray character, or a YAML construct that costs work (an
alias bomb, deep nesting, an alias loop). The same seed gives the same mutants.

Run as a script to count outcomes over many mutants (the figures of the closing note)::

    python tests/mutants.py --count 3000 --seed 1
"""

from __future__ import annotations

import random
import re
from pathlib import Path

CASES = Path(__file__).resolve().parent.parent / "cases"

HOSTILE_VALUES = [
    "0", "-1", "1e300", "-1e300", "1e-300", "1e999", ".nan", ".inf", "-.inf", "1" + "0" * 400,
    "9" * 5000, "abc", "O.1", "''", "null", "~", "true", "[]", "{}", "[1, 2]", "{a: 1}",
    "!!float abc", "!!int 12abc", "!!timestamp 2001-13-45", "2001-13-45", "!!binary aGVsbG8=",
    '"\\ud800"', '"\\0"', '"a\\x07b"', "&x [*x]", "*undefined", "!!python/object:os.system x",
    "'x**x**x**x**x'", "'exp(exp(exp(exp(exp(x)))))'", "'exp(exp(exp(exp(100))))*x**2'",
    "1000000", "-1000000", "0.5", "3", "auto", "[nuclear]", "1/2", "'5/2'", "2147483648",
    "-0.0", "1e-12", "{from: 0, to: 1, steps: 100000000}", "{from: 1, to: 0, steps: 2}",
]

# Formulas for an added ``expression`` term: ordinary ones and ones that cost work or overflow.
FORMULAS = ["0.1*x**4", "0.01*r**4", "x**x**x**x**x", "exp(exp(exp(exp(exp(x)))))",
            "exp(exp(exp(exp(100))))*x**2", "x**1000000", "10**10**10", "(" * 500 + "x" + ")" * 500,
            "1/0", "log(0)*x", "sqrt(-1)*x", "x" + "+x" * 20000, "nan*x", "inf*x", "gamma(1e6)",
            "sin(x)**2", "abs(x)**0.5", "exp(-r**2)", "tanh(1e308*x)", "x/(x-x)"]

STRAY = ["\t", "\x00", "\x07", "\ufeff", "\u00e9", "\U0001F600", "[", "]", "{", "}", ":", "'",
         '"', "&", "*", "!", "%", "@", "`", "|", ">", "#", ",", "-", "?", "\\"]


def _bomb(levels: int) -> str:
    lines = ['lol0: &lol0 ["x","x","x","x","x","x","x","x","x"]']
    for i in range(1, levels):
        lines.append(f"lol{i}: &lol{i} [" + ",".join([f"*lol{i - 1}"] * 9) + "]")
    return "\n".join(lines) + "\n"


PREFIXES = [_bomb(7), _bomb(9), "deep: " + "[" * 3000 + "]" * 3000 + "\n", "loop: &a [*a]\n",
            "loop: &m {k: *m}\n"]


def _scalar_spans(text: str) -> list[tuple[int, int]]:
    """Spans of scalar values: after ``key:`` and inside flow lists, outside comments."""
    spans = []
    for m in re.finditer(r"(?<=: )[^\s{}\[\],#][^{}\[\],#\n]*", text):
        spans.append((m.start(), m.end()))
    return spans


def mutate(text: str, rng: random.Random) -> str:
    """One random edit of ``text``."""
    lines = text.splitlines(keepends=True)
    op = rng.randrange(12)
    if op == 11 and "\nwell:\n" in text:  # an expression term in front of the well's terms
        formula = rng.choice(FORMULAS)
        if "dimension: 1" not in text:  # radial channels read r (x is refused there)
            formula = formula.replace("x", "r")
        return text.replace("\nwell:\n", f"\nwell:\n  - expression: {{formula: '{formula}'}}\n",
                            1)
    if op <= 2:  # the most telling edit: a hostile value in place of a real one
        spans = _scalar_spans(text)
        if spans:
            a, b = rng.choice(spans)
            return text[:a] + rng.choice(HOSTILE_VALUES) + text[b:]
    if op == 3 and lines:
        del lines[rng.randrange(len(lines))]
    elif op == 4 and lines:
        i = rng.randrange(len(lines))
        lines.insert(i, lines[i])
    elif op == 5 and len(lines) > 1:
        i, j = rng.sample(range(len(lines)), 2)
        lines[i], lines[j] = lines[j], lines[i]
    elif op == 6 and lines:
        i = rng.randrange(len(lines))
        lines[i] = " " * rng.choice([1, 2, 3, 4, 8]) + lines[i] if rng.random() < 0.5 \
            else lines[i].lstrip(" ")
    elif op == 7:
        keys = list(re.finditer(r"\b([a-z_]{3,})(?=:)", text))
        if keys:
            m = rng.choice(keys)
            word = m.group(1)
            k = rng.randrange(len(word))
            new = word[:k] + word[k + 1:] if rng.random() < 0.5 else word[:k] + "x" + word[k:]
            return text[:m.start()] + new + text[m.end():]
    elif op == 8:
        return text[:rng.randrange(len(text) + 1)]
    elif op == 9:
        k = rng.randrange(len(text) + 1)
        return text[:k] + rng.choice(STRAY) + text[k:]
    else:
        return rng.choice(PREFIXES) + text
    return "".join(lines)


def mutants(count: int, seed: int) -> list[tuple[str, str]]:
    """``count`` mutants ``(demo file name, text)`` of the demo cases, from ``seed``."""
    rng = random.Random(seed)
    demos = sorted(CASES.glob("*.yaml"))
    out = []
    for _ in range(count):
        demo = rng.choice(demos)
        text = demo.read_text(encoding="utf-8")
        for _ in range(rng.choice([1, 1, 2, 3])):
            text = mutate(text, rng)
        out.append((demo.name, text))
    return out


def _main() -> None:  # pragma: no cover - a tool for the closing note's counts
    import argparse
    import contextlib
    import io
    import shutil
    import signal
    import tempfile
    import time

    from anharmony.cli import main

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--count", type=int, default=300)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--timeout", type=float, default=20.0)
    args = ap.parse_args()

    class Hang(Exception):
        pass

    def alarm(*_):
        raise Hang

    signal.signal(signal.SIGALRM, alarm)
    tally: dict[str, int] = {}
    examples: dict[str, str] = {}
    with tempfile.TemporaryDirectory() as tmp:
        for name in CASES.iterdir():
            shutil.copy(name, tmp)
        start = time.perf_counter()
        for i, (demo, text) in enumerate(mutants(args.count, args.seed)):
            path = Path(tmp) / f"m{i}-{demo}"
            path.write_text(text, encoding="utf-8", errors="surrogatepass")
            err = io.StringIO()
            signal.setitimer(signal.ITIMER_REAL, args.timeout)
            try:
                with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(err):
                    code = main(["check", str(path)])
                kind = f"exit {code}"
                if "internal error" in err.getvalue():
                    kind = "internal error"
            except Hang:
                kind = "hang"
            except BaseException as exc:  # counting what escapes
                kind = f"uncaught {type(exc).__name__}"
            finally:
                signal.setitimer(signal.ITIMER_REAL, 0)
            tally[kind] = tally.get(kind, 0) + 1
            examples.setdefault(kind, f"{path.name}: {err.getvalue().strip()[:200]}")
            path.unlink()
    print(f"{args.count} mutants (seed {args.seed}) in {time.perf_counter() - start:.0f} s")
    for kind, n in sorted(tally.items()):
        print(f"  {kind:28s} {n:5d}   e.g. {examples[kind]!r}")


if __name__ == "__main__":  # pragma: no cover
    _main()
