"""Reads the help that the built `lopside` prints, for the man pages and shell completions.

The man pages (tools/make-manpages) and the completions (tools/make-completions) are made at
build time from the same text a user sees with `lopside --help` and `lopside CMD --help`, so a
new or renamed option reaches all three at once. This module only parses; each generator
formats.

The layout read is CLI11's default formatter (CLI/impl/Formatter_inl.hpp, format_help): the
description, a "Usage:" line, then groups ("Positionals:", "Options:", "Subcommands:" and one
per option group) whose items are indented two spaces, with the item's name padded to a fixed
column (30 by default) and the description starting at that column; a name too long for the
column is alone on its line and the description follows on lines indented to the column.
Anything else is refused with an error naming the line, so a change of layout stops the build
instead of producing a page with options missing.
"""

from __future__ import annotations

import os
import re
import subprocess
from dataclasses import dataclass, field


class HelpFormatError(Exception):
    """The help text does not have the layout this module reads."""


@dataclass
class Item:
    """One entry of a help group: an option, a positional argument or a subcommand."""

    spec: str  # the name column as printed, e.g. "--json FILE|-" or "-h,--help"
    description: str
    group: str  # the group heading without its colon, e.g. "Options", "Reading the capture"

    @property
    def names(self) -> list[str]:
        """The option's names ("-h", "--help") or the positional's or subcommand's name."""
        return self.spec.split(" ", 1)[0].split(",")

    @property
    def is_option(self) -> bool:
        return self.names[0].startswith("-")

    @property
    def _annotation(self) -> str:
        parts = self.spec.split(" ", 1)
        return parts[1] if len(parts) > 1 else ""

    @property
    def required(self) -> bool:
        return self._annotation.endswith("REQUIRED")

    @property
    def value(self) -> str:
        """What the option takes as printed ("FILE|-", "TEXT:{glow,arc}"), "" for a flag.

        CLI11 appends " ..." to items that take several values and " REQUIRED" to required
        ones (Formatter::make_option_opts); both are removed here (see `repeatable`).
        """
        text = self._annotation
        if text.endswith("REQUIRED"):
            text = text[: -len("REQUIRED")].rstrip()
        if text.endswith(" ..."):
            text = text[: -len(" ...")]
        elif text == "...":
            text = ""
        return text

    @property
    def repeatable(self) -> bool:
        text = self._annotation
        if text.endswith("REQUIRED"):
            text = text[: -len("REQUIRED")].rstrip()
        return text.endswith("...")

    @property
    def takes_value(self) -> bool:
        return self.value != ""

    @property
    def choices(self) -> list[str]:
        """The values of a closed set ("TEXT:{glow,arc}" gives glow, arc), else []."""
        m = re.search(r"\{([^{}]*)\}", self.value)
        return [c for c in m.group(1).split(",") if c] if m else []

    @property
    def takes_file(self) -> bool:
        """Whether the value names a file: lopside's options say FILE (FILE, FILE|-,
        FILE.html, FILE.csv) in their value's name; every positional names a capture file,
        a folder or a list of them."""
        if not self.is_option:
            return self.group == "Positionals" and not self.choices
        return re.search(r"\bFILE\b", self.value) is not None


@dataclass
class Help:
    """One help page: `lopside --help` or `lopside CMD --help`."""

    description: str
    usage: str  # after "Usage: "
    items: list[Item] = field(default_factory=list)

    def group(self, name: str) -> list[Item]:
        return [i for i in self.items if i.group == name]

    @property
    def options(self) -> list[Item]:
        return [i for i in self.items if i.is_option and i.group != "Subcommands"]

    @property
    def positionals(self) -> list[Item]:
        return self.group("Positionals")

    @property
    def subcommands(self) -> list[Item]:
        return self.group("Subcommands")

    @property
    def option_groups(self) -> list[str]:
        """The groups holding options, in the order printed."""
        seen: list[str] = []
        for i in self.options:
            if i.group not in seen:
                seen.append(i.group)
        return seen


_GROUP = re.compile(r"^(\S.*):$")
_ITEM = re.compile(r"^  (\S.*)$")
_CONTINUATION = re.compile(r"^ {3,}(\S.*)$")


def parse(text: str, source: str) -> Help:
    """Parses one help page; `source` names it in errors ("lopside measure --help")."""
    lines = text.split("\n")
    description: list[str] = []
    n = 0
    while n < len(lines) and not lines[n].startswith("Usage: "):
        description.append(lines[n])
        n += 1
    if n == len(lines):
        raise HelpFormatError(f"{source}: no 'Usage:' line")
    usage = lines[n][len("Usage: ") :].strip()
    n += 1

    body = lines[n:]
    column = _description_column(body)
    help_ = Help("\n".join(d for d in description if d.strip()), usage)
    group: str | None = None
    for offset, line in enumerate(body):
        where = f"{source}: line {n + offset + 1}"
        if not line.strip():
            continue
        if m := _GROUP.match(line):
            group = m.group(1)
            continue
        if group is None:
            raise HelpFormatError(f"{where}: text before the first group heading: {line!r}")
        next_line = body[offset + 1] if offset + 1 < len(body) else ""
        if m := _ITEM.match(line):
            name, desc = _split_item(line, column, _CONTINUATION.match(next_line) is not None)
            help_.items.append(Item(name, desc, group))
        elif m := _CONTINUATION.match(line):
            if not help_.items or help_.items[-1].group != group:
                raise HelpFormatError(f"{where}: continuation without an item: {line!r}")
            last = help_.items[-1]
            last.description = (last.description + " " + m.group(1)).strip()
        else:
            raise HelpFormatError(f"{where}: unexpected line: {line!r}")
    return help_


def _description_column(body: list[str]) -> int:
    """The column where item descriptions start, found from the continuation lines (the
    description of a long name starts there) or else from the two-space gap after a name."""
    for line in body:
        if m := _CONTINUATION.match(line):
            return len(line) - len(m.group(1))
    for line in body:
        if _ITEM.match(line) and (m := re.search(r"\S {2,}(?=\S)", line)):
            return m.end()
    return 30


def _split_item(line: str, column: int, continued: bool) -> tuple[str, str]:
    """Splits an item line into name and description.

    CLI11 joins the parts of a name with single spaces and pads a name shorter than the
    column, so the first gap of two or more spaces ends the name. A name one character short
    of the column gets a single space; a name as long as the column stands alone and its
    description follows on continuation lines.
    """
    body = line[2:]
    if m := re.search(r" {2,}(?=\S)", body):
        return body[: m.start()], body[m.end() :].strip()
    if not continued and len(line) > column and line[column - 1] == " " and line[column] != " ":
        return line[:column].strip(), line[column:].strip()
    return line.strip(), ""


def _environment() -> dict:
    """The build's environment (a sanitizer's options reach the program) in one locale, so the
    text does not depend on the builder's language settings."""
    return dict(os.environ, LC_ALL="C.UTF-8")


def run_help(lopside: str, *command: str) -> Help:
    """Runs `lopside [CMD] --help` and parses what it prints."""
    args = [lopside, *command, "--help"]
    source = " ".join(["lopside", *command, "--help"])
    done = subprocess.run(args, stdout=subprocess.PIPE, stderr=subprocess.PIPE, check=False,
                          env=_environment())
    if done.returncode != 0:
        raise HelpFormatError(f"{source}: exit status {done.returncode}: "
                              f"{done.stderr.decode(errors='replace').strip()}")
    return parse(done.stdout.decode("utf-8"), source)


def run_version(lopside: str) -> str:
    """What `lopside --version` prints, e.g. "lopside 0.1.0 (git 698afbf)"."""
    done = subprocess.run([lopside, "--version"], stdout=subprocess.PIPE, check=True,
                          env=_environment())
    return done.stdout.decode("utf-8").strip()


def check_commands(top: Help, expected: list[str]) -> list[str]:
    """The subcommands of `lopside --help`, which must be the list the build knows (CMake
    names one man page per command: a new command must be added there too)."""
    found = [s.names[0] for s in top.subcommands]
    if sorted(found) != sorted(expected):
        raise HelpFormatError(
            f"lopside --help lists the commands {', '.join(found)}, the build expects "
            f"{', '.join(expected)}: update LOPSIDE_COMMANDS in cmake/LopsideInstall.cmake")
    return found
