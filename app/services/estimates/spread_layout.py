"""Where each estimate's label goes on the spread drawing, so that no label hides another or
runs off the drawing (templates/estimates/_spread.html draws what this places).

The drawing is 1000 units wide, the axis from 40 to 960. A label ("A. Okafor · 3.0e-3") at
font size 15 is taken as 8.6 units a character: DejaVu Sans's average advance at that size,
slightly generous (measured on the demo's labels in Chromium: 8.1 to 8.5).
"""

from collections.abc import Sequence

from app.likelihood.numbers import format_number

AXIS_LEFT, AXIS_WIDTH, DRAWING_WIDTH = 40.0, 920.0, 1000.0
CHAR_WIDTH = 8.6
LABEL_GAP = 14.0  # clear space between two labels on one line

Span = tuple[float, float]


def mark_label(person: str | None, by_scribe: bool, value: float) -> str:
    """'Name* · 1.0e-2' (the star: typed by the scribe), or only the value with names hidden."""
    if person is None:
        return format_number(value)
    return f"{person}{'*' if by_scribe else ''} · {format_number(value)}"


def _centre(label: str, position: float) -> float:
    """Under the mark, moved inwards just enough to stay on the drawing."""
    half = CHAR_WIDTH * len(label) / 2
    wanted = AXIS_LEFT + AXIS_WIDTH * position
    return min(max(wanted, half), DRAWING_WIDTH - half)


def place_labels(labels: Sequence[str], positions: Sequence[float]) -> list[tuple[float, int]]:
    """(centre x, line) of each label: lowest line where it overlaps no label placed before,
    placing from left to right so the lines pack tightly; in the labels' own order."""
    lines: list[list[Span]] = []
    placed: dict[int, tuple[float, int]] = {}
    for index in sorted(range(len(labels)), key=lambda i: positions[i]):
        centre = _centre(labels[index], positions[index])
        half = CHAR_WIDTH * len(labels[index]) / 2 + LABEL_GAP / 2
        span = (centre - half, centre + half)
        line = next((n for n, taken in enumerate(lines)
                     if all(span[1] <= low or span[0] >= high for low, high in taken)),
                    len(lines))
        if line == len(lines):
            lines.append([])
        lines[line].append(span)
        placed[index] = (centre, line)
    return [placed[index] for index in range(len(labels))]
