"""Every citation points to something a reader can find: the paper or standard itself, or a
file of this repository, never a note that is not in it."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
FILES = sorted(
    p
    for pattern in ("core/**/*.py", "service/**/*.py", "tests/**/*.py", "*.md")
    for p in ROOT.glob(pattern)
    if p != Path(__file__).resolve()
)
# pointers to the team's notes, which are not part of the repository
ELSEWHERE = re.compile(r"design\.md|design notes?\b|team's notes", re.IGNORECASE)


@pytest.mark.parametrize("path", FILES, ids=[str(p.relative_to(ROOT)) for p in FILES])
def test_no_pointer_to_notes_outside_the_repository(path: Path) -> None:
    text = path.read_text(encoding="utf-8")
    found = [m.group(0) for m in ELSEWHERE.finditer(text)]
    assert not found, f"{path.relative_to(ROOT)} cites {found}: cite the source itself"
