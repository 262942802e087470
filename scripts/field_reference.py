"""Rewrite the scenario-field table of DEVELOPERS.md from wetcycle.config.SCHEMA.

    python scripts/field_reference.py
"""

import re
from pathlib import Path

from wetcycle.config import schema_markdown

PATH = Path(__file__).resolve().parents[1] / "DEVELOPERS.md"
BEGIN, END = "<!-- fields:begin -->\n", "<!-- fields:end -->"

text = PATH.read_text()
new = re.sub(re.escape(BEGIN) + ".*?" + re.escape(END), lambda m: BEGIN + schema_markdown() + END, text, flags=re.S)
PATH.write_text(new)
print(f"{PATH.name}: {'updated' if new != text else 'already current'}")
