"""Where the repository's folders are, found by its pyproject.toml rather than by counting parents."""

from pathlib import Path

REPO_ROOT = next(p for p in Path(__file__).resolve().parents if (p / "pyproject.toml").is_file())
CODEGEN_DIR = REPO_ROOT / "codegen"
FIRMWARE_EXAMPLES_DIR = REPO_ROOT / "firmware_examples"
