"""A bulletin of coded upper-air reports split into reports and groups, each with its span.

Text as it comes from a message switch or a web page: optional starting line (`ZCZC nnn`),
abbreviated heading (`TTAAii CCCC YYGGgg [BBB]`, e.g. `USXX01 EXMP 081200 CCA`), reports
each ending with `=`, optional end (`NNNN`), with lines wrapped anywhere between groups.
Groups are separated by spaces, tabs or line ends; control characters (SOH, ETX, CR)
count as spaces. A report starts with its identifier (`TTAA`, `PPBB`, ...); text outside
a report is ignored with a warning, never silently.

Conventions of WMO-No. 306 Vol. I.1 Part A (reports end with `=`) and of the Manual on
the Global Telecommunication System, WMO-No. 386 (heading `T1T2A1A2ii CCCC YYGGgg (BBB)`
with BBB = RRx delayed, CCx corrected, AAx amended): from memory, not re-read.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from layercalc.errors import Notice
from layercalc.source import Source, Span

# MiMi of the upper-air codes: (code, kind of station) from memory of WMO-No. 306
# (FM 32 PILOT: PP land, QQ ship, EE mobile; FM 35 TEMP land TT, FM 36 TEMP SHIP UU,
# FM 37 TEMP DROP XX, FM 38 TEMP MOBIL II).
MIMI = {
    "TT": ("TEMP", "land"), "UU": ("TEMP", "ship"), "XX": ("TEMP", "drop"),
    "II": ("TEMP", "mobile"),
    "PP": ("PILOT", "land"), "QQ": ("PILOT", "ship"), "EE": ("PILOT", "mobile"),
}
PARTS = ("AA", "BB", "CC", "DD")

_IDENTIFIER = re.compile(r"^(TT|UU|XX|II|PP|QQ|EE)(AA|BB|CC|DD)$")
_HEADING = re.compile(r"^[A-Z]{4}\d{2}\s+[A-Z]{4}\s+\d{6}(?:\s+(?P<bbb>(?:RR|CC|AA)[A-Z]))?\s*$")
_SWITCH = re.compile(r"^(?:ZCZC.*|NNNN|\d{3,5})$")
_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f]")
_GROUP = re.compile(r"[^\s=]+|=")


@dataclass(frozen=True)
class Group:
    text: str
    span: Span


@dataclass(frozen=True)
class Report:
    """One report: its groups (identifier first) and the heading it came under."""

    groups: tuple[Group, ...]
    correction: str | None      # "CCA" from the heading, "COR" before the report, or None
    heading: str | None
    terminated: bool             # ended with "="

    @property
    def span(self) -> Span:
        first, last = self.groups[0].span, self.groups[-1].span
        return Span(first.source, first.start, last.end)

    @property
    def identifier(self) -> str:
        return self.groups[0].text

    @property
    def line(self) -> int:
        return self.groups[0].span.line


def split_bulletin(source: Source) -> tuple[list[Report], list[Notice]]:
    """Reports of a bulletin in order, and warnings about text outside any report."""
    text = _CONTROL.sub(" ", source.text)
    reports: list[Report] = []
    notices: list[Notice] = []
    heading: str | None = None
    correction: str | None = None
    current: list[Group] = []
    current_correction: str | None = None
    stray: list[Group] = []
    pending_cor = False

    def flush_stray():
        if stray:
            span = Span(source, stray[0].span.start, stray[-1].span.end)
            words = " ".join(g.text for g in stray[:4]) + (" ..." if len(stray) > 4 else "")
            notices.append(Notice(
                f"ignored text outside any report ({words}); a report starts with its "
                "identifier (TTAA, TTBB, PPBB, ...) and ends with '='", span))
            stray.clear()

    def close(terminated: bool):
        nonlocal current, current_correction
        if current:
            reports.append(Report(tuple(current), current_correction, heading, terminated))
            if not terminated:
                notices.append(Notice(
                    f"report {current[0].text} at line {current[0].span.line} does not end "
                    "with '='; it is taken to end where the next report or the text begins",
                    current[-1].span))
        current = []
        current_correction = None

    offset = 0
    for line in text.split("\n"):
        stripped = line.strip()
        start = offset
        offset += len(line) + 1
        if not current:
            match = _HEADING.match(stripped)
            if match:
                flush_stray()
                heading = stripped
                correction = match.group("bbb")
                continue
            if _SWITCH.match(stripped) or not stripped:
                continue
        for match in _GROUP.finditer(line):
            word = match.group(0)
            span = Span(source, start + match.start(), start + match.end())
            group = Group(word, span)
            if _IDENTIFIER.match(word):
                if current:
                    close(False)
                flush_stray()
                current = [group]
                current_correction = "COR" if pending_cor else correction
                pending_cor = False
                continue
            if word == "=":
                if current:
                    close(True)
                continue
            if not current:
                if word == "COR" and not stray:
                    pending_cor = True  # a correction marker before the report's identifier
                    continue
                if word == "NNNN":
                    continue
                stray.append(group)
                continue
            current.append(group)
    if current:
        close(False)
    flush_stray()
    return reports, notices
