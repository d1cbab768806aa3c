"""Lines that a narrow terminal breaks only between phrases, never inside one.

Wrapped word by word, a line of figures (``error -319.898 ppm, worst 344.89 ppm of
2.2364 %``) can leave a number on one line and its unit or its name on the next.
:class:`Phrases` keeps each phrase whole: it fills a line with as many phrases as the
width it is given holds and starts the next line with the phrase that did not fit. Only
a phrase wider than the whole width is still wrapped word by word, as nothing else fits.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from rich.cells import cell_len
from rich.console import Console, ConsoleOptions, RenderResult
from rich.measure import Measurement
from rich.text import Text

__all__ = ["Phrases", "listed"]


@dataclass(frozen=True)
class Phrases:
    """Paragraphs of phrases. Each phrase after a paragraph's first carries the space that
    separates it from the one before, dropped when it starts a line; a paragraph's lines
    after its first are indented as far as its first phrase is, and ``hanging`` further."""

    paragraphs: tuple[tuple[Text, ...], ...]
    hanging: int = 0

    def text(self, width: int) -> Text:
        """The paragraphs as one text, each line holding as many whole phrases as fit."""
        lines: list[Text] = []
        for paragraph in self.paragraphs:
            indent = _leading_spaces(paragraph[0].plain) + self.hanging
            line = paragraph[0].copy()
            for phrase in paragraph[1:]:
                if line.cell_len + phrase.cell_len <= width:
                    line.append_text(phrase)
                    continue
                lines.append(line)
                line = Text(" " * indent) + phrase[_leading_spaces(phrase.plain) :]
            lines.append(line)
        return Text("\n").join(lines)

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        yield self.text(options.max_width)

    def __rich_measure__(self, console: Console, options: ConsoleOptions) -> Measurement:
        phrases = [phrase.plain.strip() for paragraph in self.paragraphs for phrase in paragraph]
        widest = max(sum(phrase.cell_len for phrase in paragraph) for paragraph in self.paragraphs)
        return Measurement(max(map(cell_len, phrases)), widest)


def listed(items: Sequence[str], gap: str = " ") -> tuple[Text, ...]:
    """Items of a comma-separated list as phrases, each keeping its comma: ``("a,", " b")``."""
    return tuple(
        Text(("" if index == 0 else gap) + item + ("," if index < len(items) - 1 else ""))
        for index, item in enumerate(items)
    )


def _leading_spaces(text: str) -> int:
    return len(text) - len(text.lstrip(" "))
