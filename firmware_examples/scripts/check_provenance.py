"""Check where an emitted folder came from: project digest, tool version, and (optionally) a re-emit.

1. The SHA-256 of the project file (for ``demo``: the built-in demo project's text) must equal the
   input digest recorded in ``<prefix>_tables.h`` (macro ``<PREFIX>_INPUT_DIGEST``) and in
   ``manifest.json``.
2. The stillhook version recorded there (``<PREFIX>_TOOL_VERSION``) must be the installed one (else step
   3 may differ).
3. With ``--re-emit``: emit the project again into a temporary folder with the manifest's format and
   prefix, and compare every file byte for byte (emitted files carry no timestamps, so the same
   project and tool version give the same bytes). A hand-edited table fails here.

Usage: python check_provenance.py --emit-dir DIR --project PROJECT.toml|demo [--re-emit]
Exit status 0 when everything matches, 1 otherwise (each difference on its own line).
"""

from __future__ import annotations

import argparse
import hashlib
import json
import re
import sys
import tempfile
from pathlib import Path

import stillhook
from stillhook.project import demo_project_text


def project_digest(project: str) -> str:
    """SHA-256 (hex) of the project file's bytes, as stillhook.project records it."""
    raw = demo_project_text().encode("utf-8") if project == "demo" else Path(project).read_bytes()
    return hashlib.sha256(raw).hexdigest()


def header_facts(header_text: str, prefix: str) -> dict:
    """Digest and tool version from the string macros of ``<prefix>_tables.h``:
    ``<PREFIX>_INPUT_DIGEST`` and ``<PREFIX>_TOOL_VERSION`` (the same ones firmware can print or log)."""
    P = re.escape(prefix.upper())

    def macro(name: str) -> str | None:
        m = re.search(rf'^#define {P}_{name} "([^"\\]*)"$', header_text, re.MULTILINE)
        return m.group(1) if m else None

    return {"digest": macro("INPUT_DIGEST"), "version": macro("TOOL_VERSION")}


def check(emit_dir: Path, project: str, re_emit: bool) -> list[str]:
    problems = []
    manifest = json.loads((emit_dir / "manifest.json").read_text(encoding="utf-8"))
    prefix = manifest["prefix"]
    facts = header_facts((emit_dir / f"{prefix}_tables.h").read_text(encoding="utf-8"), prefix)
    want = project_digest(project)
    print(f"project {project}: sha256 {want}")
    print(f"{prefix}_tables.h: {prefix.upper()}_INPUT_DIGEST {facts['digest']}, {prefix.upper()}_TOOL_VERSION "
          f"{facts['version']}")
    print(f"manifest.json: input digest {manifest['input_digest_sha256']}, stillhook {manifest['tool_version']}")
    if facts["digest"] != want:
        problems.append(f"{prefix}_tables.h digest {facts['digest']} is not the project's {want}")
    if manifest["input_digest_sha256"] != want:
        problems.append(f"manifest.json digest {manifest['input_digest_sha256']} is not the project's {want}")
    if facts["version"] != stillhook.__version__ or manifest["tool_version"] != stillhook.__version__:
        problems.append(f"emitted by stillhook {facts['version']} / {manifest['tool_version']}, installed "
                        f"{stillhook.__version__}: a re-emit may differ")
    if re_emit:
        from stillhook.firmware.plan import write_emit
        from stillhook.project import load_project_or_demo

        with tempfile.TemporaryDirectory() as tmp:
            write_emit(load_project_or_demo(project), tmp, fmt=manifest["format"], prefix=prefix)
            fresh = {p.name: p.read_bytes() for p in Path(tmp).iterdir()}
        have = {p.name: p.read_bytes() for p in emit_dir.iterdir() if p.is_file()}
        for name in sorted(set(fresh) | set(have)):
            if name not in have:
                problems.append(f"{name}: missing from {emit_dir}")
            elif name not in fresh:
                problems.append(f"{name}: not written by a fresh emit")
            elif fresh[name] != have[name]:
                problems.append(f"{name}: differs from a fresh emit of the project")
        print(f"re-emit: {len(fresh)} files compared byte for byte")
    return problems


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--emit-dir", type=Path, required=True)
    ap.add_argument("--project", required=True, help="project file, or 'demo'")
    ap.add_argument("--re-emit", action="store_true")
    args = ap.parse_args()
    problems = check(args.emit_dir, args.project, args.re_emit)
    for p in problems:
        print(f"provenance: MISMATCH: {p}", file=sys.stderr)
    if not problems:
        print("provenance: the tables match the project and this stillhook version")
    return 1 if problems else 0


if __name__ == "__main__":
    raise SystemExit(main())
