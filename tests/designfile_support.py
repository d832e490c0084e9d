"""Reading the numbers back out of a written design file, for the readability tests."""

from __future__ import annotations

import re

#: a quoted quantity of a design file: "0.4823 ohm", "47 uF", "-10 %", "+6 %"
QUANTITY = re.compile(r'"([-+]?)(\d+(?:\.\d*)?)(?:e[-+]?\d+)? ?([^"\d\s][^"]*)"')


def figures_of(number: str) -> int:
    """Significant figures of a decimal as written: "0.4823" 4, "47" 2, "100" 1, "1.70" 3."""
    digits = number.replace(".", "").lstrip("0")
    if "." not in number:
        digits = digits.rstrip("0")
    return max(len(digits), 1)


def significant_figures(text: str) -> list[int]:
    """The significant figures of every quoted quantity (a number with a unit) in a
    design file's text, comments left out."""
    body = "\n".join(line for line in text.splitlines() if not line.lstrip().startswith("#"))
    found = [figures_of(m.group(2)) for m in QUANTITY.finditer(body)]
    assert found, "test setup: no quantity found in the file"
    return found
