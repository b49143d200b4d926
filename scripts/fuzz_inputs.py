#!/usr/bin/env python3
"""Mutation fuzzing of everything schemcheck reads: seeded, reproducible, one process.

Each input is a real file (the fixtures; the corpus too when ``--corpus`` names it)
with a few random edits: bytes deleted, inserted or replaced, the file cut short, and
tokens that broke the tool before (numbers of hundreds of digits, ``nan``, ``1e999``,
brackets nested past any limit, wrong TOML types, ...). Schematics and netlists are
audited as they are; parts libraries and settings files are mutated beside the demo
design and audited through it. Each input runs through the command line in-process
(``schemcheck audit FILE --format json``) under a time limit; the whole run under a
memory limit. Every outcome must be one of

* exit 0 or 1 with a strict JSON report (no NaN, no Infinity);
* exit 2 with every ``Error:`` line naming the file, line and column;

never a traceback, a hang or a memory error. Prints each failure and a summary; exit
status 1 when an input failed. The test suite runs a few hundred inputs; run more here:

    python scripts/fuzz_inputs.py --count 5000 --seed 7 --corpus ../shared/corpus
"""

from __future__ import annotations

import argparse
import json
import os
import random
import re
import resource
import shutil
import signal
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = ROOT / "fixtures"
DESIGN_SUFFIXES = (".kicad_sch", ".net", ".xml")

#: Edits that broke the tool before, or that sit where a reader must decide something.
TOKENS = [b"(", b")", b'"', b"\\", b" ", b"\n", b"\t", b"abc", b"1.5", b"-", b"^", b"\xff",
          b"\x00", b"(at x y)", b"(pin", b"(symbol", b"(sheet", b"<", b">", b"&x;", b"nan",
          b"inf", b"-inf", b"1e999", b"-1e400", b"1" * 400, b"1" * 320 + b".5", b"0",
          b"-0.0", b"(" * 300, b")" * 300, b"9" * 30, b"\xce\xa9", b"\xef\xbb\xbf",
          b"(property \"Aol\" \"1e999\")", b"(property \"T_hot\" \"nan\")",
          b"(property \"Vos\" \"1e308V\")", b"(property \"Sheetfile\" \"/etc/passwd\")",
          b"(property \"Sheetfile\" \"fuzz.kicad_sch\")", b"(xy 1e3 2)",
          b"<!DOCTYPE x [<!ENTITY a \"b\">]>"]
TOML_TOKENS = [b"nan", b"inf", b"-inf", b"1e999", b"-1", b"0", b"true", b"\"no\"", b"\"hot\"",
               b"5", b"[", b"]", b"{", b"}", b"=", b"\n", b"\"", b"1" * 400, b"[[[[[[[[",
               b"\"100000dB\"", b"\"0\"", b"aliases = 5\n", b"t_hot = \"hot\"\n",
               b"ib_either_sign = \"no\"\n", b"aol = 0\n", b"seed = -1\n",
               b"temperature_range = [nan, nan]\n", b"monte_carlo_samples = true\n",
               b"parts_library = \"/dev/zero\"\n", b"[parts.\"X\"]\n", b"\xff"]


class Hang(BaseException):
    """An input ran past its time limit (a BaseException: nothing of ours catches it)."""


def _on_alarm(signum, frame):
    raise Hang()


def seeds(corpus: Path | None, fixtures: bool = True
          ) -> tuple[list[tuple[str, bytes]], list[tuple[str, bytes]]]:
    """(design seeds, TOML seeds): (file suffix, content)."""
    designs = [(p.suffix, p.read_bytes()) for p in sorted(FIXTURES.rglob("*"))
               if fixtures and p.suffix in DESIGN_SUFFIXES and p.name != "bomb.xml"]
    if corpus is not None:
        designs += [(p.suffix, p.read_bytes()) for p in sorted(corpus.rglob("*"))
                    if p.suffix in (".kicad_sch", ".net") and p.is_file()]
    tomls = [(".toml:parts", (FIXTURES / "demo" / "parts.toml").read_bytes()),
             (".toml:settings", (FIXTURES / "demo" / "schemcheck.toml").read_bytes())]
    return designs, tomls


def mutate(data: bytes, rng: random.Random, tokens: list[bytes]) -> tuple[bytes, list[str]]:
    """``data`` with one to six random edits, and a description of them."""
    out = bytearray(data)
    done = []
    for _ in range(rng.randint(1, 6)):
        op = rng.choice(("delete", "insert", "insert", "replace", "truncate", "number"))
        at = rng.randrange(max(1, len(out)))
        if op == "delete":
            size = rng.randint(1, 40)
            del out[at:at + size]
            done.append(f"delete {size} at {at}")
        elif op == "insert":
            token = rng.choice(tokens)
            out[at:at] = token
            done.append(f"insert {token[:20]!r} at {at}")
        elif op == "replace" and out:
            value = rng.randrange(256)
            out[at] = value
            done.append(f"replace at {at} with {value}")
        elif op == "number":  # swap a number for a hostile one
            found = list(re.finditer(rb"-?\d+(?:\.\d+)?", bytes(out)))
            if found:
                match = rng.choice(found)
                token = rng.choice([b"1" * 400, b"1e999", b"nan", b"-1e400", b"0", b"-1",
                                    b"9" * 30, b"1" * 310 + b".0"])
                out[match.start():match.end()] = token
                done.append(f"number at {match.start()} -> {token[:12]!r}")
        else:
            del out[at:]
            done.append(f"truncate at {at}")
    return bytes(out), done


_LOCATED = re.compile(r"^Error: (?:.*[/\\])?(?:fuzz\.\w+|parts\.toml|schemcheck\.toml):\d+:\d+: ")


def strict_json(text: str):
    def refuse(name):
        raise ValueError(f"{name} in the JSON output")

    return json.loads(text, parse_constant=refuse)


def judge(result, command: list[str]) -> str | None:
    """What is wrong with one run's outcome, or None."""
    from click.testing import Result

    assert isinstance(result, Result)
    if result.exception is not None and not isinstance(result.exception, SystemExit):
        import traceback

        trace = "".join(traceback.format_exception(result.exception))
        return f"traceback:\n{trace[-1500:]}"
    code = result.exit_code
    if code not in (0, 1, 2):
        return f"exit status {code}"
    if "Traceback" in result.stderr:
        return "a traceback on standard error"
    if result.stdout.strip():
        try:
            strict_json(result.stdout)
        except ValueError as error:
            return f"the report is not strict JSON: {error}"
    elif code != 2:
        return "no report"
    if code == 2:
        errors = [line for line in result.stderr.splitlines() if line.startswith("Error: ")]
        if not errors:
            return "exit status 2 without an 'Error:' line"
        for line in errors:
            if not _LOCATED.match(line):
                return f"an error without file, line and column: {line[:300]}"
    return None


def run(count: int, seed: int, corpus: Path | None, time_limit: float, memory_mb: int,
        save: Path | None, quiet: bool = False, fixtures: bool = True) -> dict:
    from click.testing import CliRunner

    from schemcheck.cli import main

    if memory_mb:
        limit = memory_mb * 1024 * 1024
        resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    signal.signal(signal.SIGALRM, _on_alarm)
    rng = random.Random(seed)
    designs, tomls = seeds(corpus, fixtures)
    work = Path(tempfile.mkdtemp(prefix="schemcheck-fuzz-"))
    demo = work / "demo"
    shutil.copytree(FIXTURES / "demo", demo)
    runner = CliRunner()
    failures = []
    slowest = 0.0
    started = time.perf_counter()
    old = os.getcwd()
    os.chdir(work)
    try:
        for index in range(count):
            # one input in five is a parts library or settings file (with fixtures)
            toml = fixtures and index % 5 == 4
            suffix, data = rng.choice(tomls if toml else designs)
            mutated, edits = mutate(data, rng, TOML_TOKENS if toml else TOKENS)
            for name in ("parts.toml", "schemcheck.toml"):
                shutil.copyfile(FIXTURES / "demo" / name, demo / name)
            if toml:
                target = demo / ("parts.toml" if suffix.endswith("parts") else "schemcheck.toml")
                target.write_bytes(mutated)
                design = demo / "chain.kicad_sch"
            else:
                design = work / f"fuzz{suffix}"
                design.write_bytes(mutated)
            command = ["audit", str(design), "--no-cache", "--jobs", "1", "--samples", "20",
                       "--format", "json"]
            begun = time.perf_counter()
            signal.setitimer(signal.ITIMER_REAL, time_limit)
            try:
                result = runner.invoke(main, command)
                problem = judge(result, command)
            except Hang:
                problem = f"no answer within {time_limit:g} s"
            except MemoryError:
                problem = f"out of memory (limit {memory_mb} MB)"
            finally:
                signal.setitimer(signal.ITIMER_REAL, 0)
            slowest = max(slowest, time.perf_counter() - begun)
            if problem:
                failures.append({"input": index, "seed": seed, "kind": suffix, "edits": edits,
                                 "problem": problem})
                if not quiet:
                    print(f"input {index} ({suffix}; {'; '.join(edits)}): {problem}",
                          flush=True)
                if save is not None:
                    save.mkdir(parents=True, exist_ok=True)
                    (save / f"input{index}{suffix.split(':')[0]}").write_bytes(mutated)
    finally:
        os.chdir(old)
        shutil.rmtree(work, ignore_errors=True)
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    return {"inputs": count, "seed": seed, "failures": failures, "slowest_s": round(slowest, 3),
            "total_s": round(time.perf_counter() - started, 1), "peak_rss_mb": round(peak_mb)}


def main_cli(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--count", type=int, default=1000)
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--corpus", type=Path, default=None,
                        help="folder of real designs to mutate too (e.g. ../shared/corpus)")
    parser.add_argument("--time-limit", type=float, default=20.0, help="seconds per input")
    parser.add_argument("--memory-mb", type=int, default=3072,
                        help="address-space limit of the whole run (0: none)")
    parser.add_argument("--save", type=Path, default=None, help="write failing inputs here")
    parser.add_argument("--corpus-only", action="store_true",
                        help="mutate the corpus files only, not the fixtures")
    parser.add_argument("--json", action="store_true", help="print the summary as JSON only")
    args = parser.parse_args(argv)
    corpus = args.corpus if args.corpus and args.corpus.is_dir() else None
    if args.corpus_only and corpus is None:
        parser.error("--corpus-only needs --corpus naming a folder")
    summary = run(args.count, args.seed, corpus, args.time_limit, args.memory_mb, args.save,
                  quiet=args.json, fixtures=not args.corpus_only)
    if args.json:
        print(json.dumps(summary))
    else:
        print(f"{summary['inputs']} inputs (seed {summary['seed']}), "
              f"{len(summary['failures'])} failed; slowest {summary['slowest_s']} s, "
              f"total {summary['total_s']} s, peak {summary['peak_rss_mb']} MB")
    return 1 if summary["failures"] else 0


if __name__ == "__main__":
    sys.exit(main_cli())
