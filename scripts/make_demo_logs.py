"""Write the demo's commissioning logs into src/stillhook/data (deterministic: fixed seeds).

    python scripts/make_demo_logs.py
"""

from pathlib import Path

from stillhook.commission.demo_logs import demo_log_texts
from stillhook.project import load_demo_project

DATA = Path(__file__).resolve().parent.parent / "src" / "stillhook" / "data"

if __name__ == "__main__":
    for name, text in demo_log_texts(load_demo_project().envelope).items():
        (DATA / name).write_text(text, encoding="utf-8")
        print(f"wrote {DATA / name} ({len(text)} bytes)")
