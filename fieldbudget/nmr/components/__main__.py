"""Regenerate what derives from the declarations: ``python -m fieldbudget.nmr.components --schema --docs``.

``--schema`` rewrites the shipped JSON Schema; ``--docs`` rewrites the
generated key tables of docs/nmr-measurement-file.md and README.md (between
their marker comments) in the repository given by ``--root`` (default: the
current folder).  Nothing is written without one of the flags.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import SCHEMA_PATH, key_tables, schema_text


def _replace(path: Path, name: str, body: str) -> None:
    start, end = f"<!-- {name}: generated from fieldbudget.nmr.components -->", f"<!-- end of {name} -->"
    text = path.read_text(encoding="utf-8")
    if start not in text or end not in text:
        raise SystemExit(f"{path}: the markers of {name!r} are missing")
    head, rest = text.split(start, 1)
    _, tail = rest.split(end, 1)
    path.write_text(f"{head}{start}\n\n{body.strip()}\n\n{end}{tail}", encoding="utf-8")


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="python -m fieldbudget.nmr.components")
    p.add_argument("--schema", action="store_true", help="rewrite the shipped JSON Schema")
    p.add_argument("--docs", action="store_true", help="rewrite the key tables of the docs and the README")
    p.add_argument("--root", default=".", help="the repository folder (for --docs)")
    a = p.parse_args(argv)
    if a.schema:
        SCHEMA_PATH.write_text(schema_text(), encoding="utf-8")
    if a.docs:
        root = Path(a.root)
        _replace(root / "docs" / "nmr-measurement-file.md", "key reference", key_tables(full=True))
        _replace(root / "README.md", "key summary", key_tables(full=False))
    if not (a.schema or a.docs):
        p.print_usage(sys.stderr)
        return 2
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
