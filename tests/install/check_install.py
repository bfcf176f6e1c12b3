#!/usr/bin/python3
"""Checks of lopside as installed: `cmake --install` into a folder, and the .deb.

    check_install.py --build BUILD --source SRC --prefix PREFIX --project-version V CHECK [ARG]

CHECK is one of
  install          install BUILD into PREFIX (emptied first) and check the list of files
  version          PREFIX/bin/lopside --version against the source tree's git describe
  man PAGE         PREFIX's PAGE.1.gz: renders without warnings, its sections, and its
                   OPTIONS (and COMMANDS, for lopside.1) are those of `lopside ... --help`
  bash             the bash completion, sourced in `bash -c` and called as readline would
  zsh-options      the zsh completion offers each command's options from --help
  zsh-syntax       `zsh -n` on the zsh completion (exit 77, a skip, without zsh)
  deb              cpack -G DEB into a temporary folder, then dpkg-deb -I and -c

Everything is compared with what the installed program prints for --help, parsed here
independently of tools/lopside_help.py, so a fault in the generators shows. Runs without
network; needs cmake, bash, python3, and for `deb` dpkg-dev. groff (package groff-base) and
man (man-db) render the pages when present; without them a roff lint of our own still runs
and the rendering is reported as skipped.
"""

from __future__ import annotations

import argparse
import gzip
import os
import re
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

SKIP = 77  # ctest SKIP_RETURN_CODE

COMPLETION_BASH = "share/bash-completion/completions/lopside"
COMPLETION_ZSH = "share/zsh/vendor-completions/_lopside"
PAGES_SECTIONS = ["NAME", "SYNOPSIS", "DESCRIPTION", "OPTIONS", "EXIT STATUS", "SEE ALSO"]
OVERVIEW_SECTIONS = ["NAME", "SYNOPSIS", "DESCRIPTION", "COMMANDS", "OPTIONS", "EXIT STATUS",
                     "SEE ALSO"]


class Failure(Exception):
    pass


def expect(condition: bool, message: str) -> None:
    if not condition:
        raise Failure(message)


def run(args, **kw) -> subprocess.CompletedProcess:
    kw.setdefault("stdout", subprocess.PIPE)
    kw.setdefault("stderr", subprocess.PIPE)
    kw.setdefault("timeout", 300)
    return subprocess.run([str(a) for a in args], check=False, **kw)


def plain_env(**extra) -> dict:
    """A small environment (no BASH_ENV, no user completion settings) in one locale; a
    sanitizer's options pass through (tools/test-sanitized)."""
    env = {"PATH": "/usr/sbin:/usr/bin:/sbin:/bin", "HOME": os.environ.get("HOME", "/root"),
           "LC_ALL": "C.UTF-8"}
    env.update({k: v for k, v in os.environ.items() if k.endswith("SAN_OPTIONS")})
    env.update(extra)
    return env


# --- what the program says about itself ---------------------------------------------------


def help_text(lopside: Path, *command: str) -> str:
    done = run([lopside, *command, "--help"], env=plain_env())
    expect(done.returncode == 0, f"lopside {' '.join(command)} --help: exit {done.returncode}")
    return done.stdout.decode()


def help_flags(text: str) -> list[str]:
    """Option names in the order --help prints them: items indented two spaces that start with
    '-', their name column ending at the first gap of two spaces (CLI11's layout)."""
    flags = []
    for line in text.splitlines():
        m = re.match(r"^  (-\S*)", line)
        if m:
            flags += m.group(1).split(",")
    return flags


def help_subcommands(text: str) -> list[str]:
    lines = text.splitlines()
    start = lines.index("Subcommands:")
    return [m.group(1) for line in lines[start + 1:] if (m := re.match(r"^  (\w+)", line))]


# --- roff -----------------------------------------------------------------------------------

ALLOWED_REQUESTS = {"TH", "SH", "SS", "TP", "PP", "B", "BR", "fchar"}
ALLOWED_ESCAPES = re.compile(r"\\(f[BIR]|-|e|&|\||\(aq|\(ga|\(dq|\[u[0-9A-F]{4}\])")


def lint_roff(source: str, name: str) -> list[str]:
    """Problems a man page should not have, found without groff: unknown requests, escapes
    outside the small set the generator may use, characters outside printable ASCII, font
    changes left open, and a line that would be taken as a request."""
    problems = []
    for n, line in enumerate(source.split("\n"), 1):
        where = f"{name}:{n}"
        if line.startswith('.\\"'):
            continue
        if any(ord(c) > 126 or (ord(c) < 32 and c != "\t") for c in line):
            problems.append(f"{where}: a character outside printable ASCII")
        if line.startswith("'"):
            problems.append(f"{where}: starts with a quote (a request to roff)")
        if line.startswith("."):
            request = line[1:].split(" ", 1)[0]
            if request not in ALLOWED_REQUESTS:
                problems.append(f"{where}: unexpected request .{request}")
        rest = ALLOWED_ESCAPES.sub("", line)
        if "\\" in rest:
            problems.append(f"{where}: unexpected escape in {line!r}")
        fonts = re.findall(r"\\f([BIR])", line)
        if fonts and fonts[-1] != "R":
            problems.append(f"{where}: font change not closed with \\fR")
    if not source.endswith("\n"):
        problems.append(f"{name}: no newline at the end")
    return problems


def roff_sections(source: str) -> dict[str, list[str]]:
    """The lines of each .SH section, by heading."""
    sections: dict[str, list[str]] = {}
    current = None
    for line in source.split("\n"):
        if line.startswith(".SH "):
            current = line[4:].strip().strip('"')
            sections[current] = []
        elif current is not None:
            sections[current].append(line)
    return sections


def unroff(line: str) -> str:
    """Text of a roff line as a reader would type it (for comparing names)."""
    line = re.sub(r"\\f[BIR]", "", line)
    line = line.replace("\\-", "-").replace("\\&", "").replace("\\|", "").replace("\\e", "\\")
    line = line.replace("\\(aq", "'").replace("\\(ga", "`").replace("\\(dq", '"')
    return re.sub(r"\\\[u([0-9A-F]{4})\]", lambda m: chr(int(m.group(1), 16)), line)


def tp_tags(lines: list[str]) -> list[str]:
    """The tag line of each .TP item."""
    return [unroff(re.sub(r"^\.BR? ", "", lines[i + 1]))
            for i, line in enumerate(lines[:-1]) if line == ".TP"]


def tag_flags(tags: list[str]) -> list[str]:
    flags = []
    for tag in tags:
        for part in tag.split(", "):
            word = part.split()[0] if part.split() else ""
            if word.startswith("-"):
                flags.append(word)
    return flags


def render(source: str, device: str, width: int = 78) -> tuple[str, str]:
    """groff's text for the page at `width` columns, and its warnings."""
    done = run(["groff", "-ww", "-man", f"-T{device}", f"-rLL={width}n", "-P-cbou"],
               input=source.encode("ascii"), env=plain_env())
    return done.stdout.decode(errors="replace"), done.stderr.decode(errors="replace")


def rendered_flags(text: str) -> list[str]:
    """Option names in the rendered OPTIONS section: tags start at column 7 (.TP's tag column
    in man's layout); a short tag shares its line with the description."""
    lines = text.replace("\u2212", "-").replace("\u2010", "-").splitlines()
    start = lines.index("OPTIONS")
    end = lines.index("EXIT STATUS")
    tags = [line[7:] for line in lines[start + 1:end]
            if line.startswith(" " * 7 + "-") or line.startswith(" " * 7 + "\u2212")]
    flags = []
    for tag in tags:
        # "-h, --help"; a tag shorter than the indent shares its line: "--full Print every …"
        for part in tag.split(", "):
            if not part.startswith("-"):
                break
            flags.append(part.split()[0])
    return flags


# --- the checks -------------------------------------------------------------------------------


def expected_files(commands: list[str]) -> set[str]:
    pages = ["lopside"] + [f"lopside-{c}" for c in commands]
    return ({"bin/lopside", COMPLETION_BASH, COMPLETION_ZSH, "share/doc/lopside/README.md"}
            | {f"share/man/man1/{p}.1.gz" for p in pages})


def check_install(a) -> None:
    if a.prefix.exists():
        shutil.rmtree(a.prefix)
    done = run(["cmake", "--install", a.build, "--prefix", a.prefix])
    expect(done.returncode == 0, "cmake --install failed:\n" + done.stderr.decode())
    found = {str(p.relative_to(a.prefix)) for p in a.prefix.rglob("*") if not p.is_dir()}
    expected = expected_files(a.commands)
    expect(found == expected, f"installed files differ: missing {sorted(expected - found)}, "
                              f"unexpected {sorted(found - expected)}")
    expect(os.access(a.prefix / "bin/lopside", os.X_OK), "bin/lopside is not executable")
    readme = (a.prefix / "share/doc/lopside/README.md").read_bytes()
    expect(readme == (a.source / "README.md").read_bytes(), "README.md differs from the source's")
    print(f"installed {len(found)} files into {a.prefix}")


def git_describe(source: Path) -> str | None:
    """`git describe --tags --always --dirty` of the source tree, None when it is not a git
    work tree of its own or git is missing (the build then prints the project version alone)."""
    if not shutil.which("git"):
        return None
    top = run(["git", "-C", source, "rev-parse", "--show-toplevel"])
    if top.returncode != 0 or Path(top.stdout.decode().strip()).resolve() != source.resolve():
        return None
    d = run(["git", "-C", source, "describe", "--tags", "--always", "--dirty"])
    return d.stdout.decode().strip() if d.returncode == 0 else None


def check_version(a) -> None:
    done = run([a.prefix / "bin/lopside", "--version"], env=plain_env())
    expect(done.returncode == 0, f"--version: exit {done.returncode}")
    printed = done.stdout.decode().strip()
    describe = git_describe(a.source)
    wanted = f"lopside {a.project_version}" + (f" (git {describe})" if describe else "")
    expect(printed == wanted, f"--version prints {printed!r}, the source tree gives {wanted!r} "
                              "(a stale build? build again)")
    expect(re.fullmatch(r"lopside \d+\.\d+\.\d+( \(git [^()\s]+\))?", printed) is not None,
           f"--version {printed!r} does not read 'lopside X.Y.Z (git DESCRIBE)'")
    print(printed)


def check_man(a, page: str) -> None:
    lopside = a.prefix / "bin/lopside"
    path = a.prefix / f"share/man/man1/{page}.1.gz"
    expect(path.is_file(), f"{path} is missing")
    with gzip.open(path) as f:
        raw = f.read()
    source = raw.decode("ascii")  # a non-ASCII byte fails here: they must be escapes
    problems = lint_roff(source, path.name)
    expect(not problems, "roff lint:\n" + "\n".join(problems))

    command = page.split("-", 1)[1] if "-" in page else None
    help_ = help_text(lopside, *([command] if command else []))
    sections = roff_sections(source)
    wanted_sections = OVERVIEW_SECTIONS if command is None else PAGES_SECTIONS
    expect(list(sections) == wanted_sections,
           f"sections {list(sections)}, expected {wanted_sections}")
    name_line = unroff(" ".join(sections["NAME"]).strip())
    expect(name_line.startswith(f"{page} - ") and len(name_line) > len(page) + 8,
           f"NAME reads {name_line!r}")

    flags = tag_flags(tp_tags(sections["OPTIONS"]))
    expect(flags == help_flags(help_),
           f"OPTIONS lists {flags}, --help prints {help_flags(help_)}")

    statuses = [int(unroff(t)) for t in tp_tags(sections["EXIT STATUS"])]
    # include/lopside/error.hpp: 0 ok, 1 internal error, 2 bad input, 3 output failed; 4 only
    # from `lopside lot`.
    wanted = [0, 1, 2, 3, 4] if command in (None, "lot") else [0, 1, 2, 3]
    expect(statuses == wanted, f"EXIT STATUS lists {statuses}, expected {wanted}")

    others = {"lopside"} | {f"lopside-{c}" for c in a.commands}
    refs = [unroff(line.split()[1]) for line in sections["SEE ALSO"] if line.startswith(".BR ")]
    expect(sorted(refs) == sorted(others - {page}), f"SEE ALSO names {refs}")

    if command is None:
        listed = [t.split()[0] for t in tp_tags(sections["COMMANDS"])]
        expect(listed == help_subcommands(help_),
               f"COMMANDS lists {listed}, --help prints {help_subcommands(help_)}")
        expect(sorted(listed) == sorted(a.commands), f"COMMANDS lists {listed}")

    if shutil.which("groff"):
        for device in ("utf8", "ascii"):
            text, warnings = render(source, device)
            expect(not warnings.strip(), f"groff -T{device} warns:\n{warnings}")
            expect(rendered_flags(text) == help_flags(help_),
                   f"rendered OPTIONS ({device}) list {rendered_flags(text)}")
            long = [line for line in text.splitlines() if len(line) > 80]
            expect(not long, f"rendered lines longer than 80 columns ({device}): {long[:3]}")
    else:
        print("groff not installed (package groff-base): rendering not checked")
    if shutil.which("man"):
        for locale in ("C", "C.UTF-8"):
            done = run(["man", "--warnings", "-l", path],
                       env=plain_env(LC_ALL=locale, MANWIDTH="80", MAN_KEEP_FORMATTING="0"))
            expect(done.returncode == 0 and not done.stderr.strip(),
                   f"man --warnings -l (LC_ALL={locale}): exit {done.returncode}\n"
                   + done.stderr.decode(errors="replace"))
    else:
        print("man not installed (package man-db): man -l not run")
    if shutil.which("lexgrog"):
        # What mandb puts in the whatis database: the NAME line must parse.
        done = run(["lexgrog", path], env=plain_env())
        expect(done.returncode == 0 and f'"{page} - ' in done.stdout.decode(),
               f"lexgrog: {done.stdout.decode()}{done.stderr.decode()}")
    print(f"{page}: {len(flags)} options, as --help prints them")


BASH_DRIVER = r"""
set -u
source "$1"
shift
# Completes the words given as readline would with the cursor at the end of the last one.
COMP_WORDS=("$@")
COMP_CWORD=$((${#COMP_WORDS[@]} - 1))
COMPREPLY=()
_lopside
printf '%s\n' "${COMPREPLY[@]}"
"""


def bash_complete(script: Path, words: list[str], cwd: Path) -> list[str]:
    done = run(["bash", "--norc", "--noprofile", "-c", BASH_DRIVER, "driver", script, *words],
               cwd=cwd, env=plain_env())
    expect(done.returncode == 0 and not done.stderr.strip(),
           f"completing {words}: exit {done.returncode}\n{done.stderr.decode()}")
    return [w for w in done.stdout.decode().split("\n") if w]


def check_bash(a) -> None:
    script = a.prefix / COMPLETION_BASH
    lopside = a.prefix / "bin/lopside"
    done = run(["bash", "--norc", "--noprofile", "-c", 'source "$1" && complete -p lopside',
                "driver", script], env=plain_env())
    expect(done.stdout.decode().strip() == "complete -F _lopside lopside",
           f"complete -p lopside: {done.stdout.decode()}{done.stderr.decode()}")

    with tempfile.TemporaryDirectory() as tmp:
        cwd = Path(tmp)
        for name in ("cap-a.csv", "cap-b.wav", "limits.toml"):
            (cwd / name).write_text("x\n")
        (cwd / "lot7").mkdir()

        def case(words: list[str], wanted: list[str]) -> None:
            got = sorted(bash_complete(script, words, cwd))
            expect(got == sorted(wanted), f"{' '.join(words)!r} completes to {got}, "
                                          f"expected {sorted(wanted)}")

        top = help_text(lopside)
        case(["lopside", "me"], ["measure"])
        case(["lopside", ""], help_subcommands(top))
        case(["lopside", "-"], help_flags(top))
        case(["lopside", "measure", "--j"], ["--json"])
        case(["lopside", "measure", "--re"], ["--reference", "--regime"])
        case(["lopside", "measure", "--regime", ""], ["glow", "arc"])
        case(["lopside", "swap", "--probe-on", "s"], ["supply"])
        # Files: positionals, an option's value, and --option=value (readline splits at '=').
        case(["lopside", "measure", "cap"], ["cap-a.csv", "cap-b.wav"])
        case(["lopside", "measure", "--json", "cap-"], ["cap-a.csv", "cap-b.wav"])
        case(["lopside", "measure", "--html", "=", "cap-b"], ["cap-b.wav"])
        case(["lopside", "lot", "--limits", "lim"], ["limits.toml"])
        case(["lopside", "lot", "lo"], ["lot7"])
        case(["lopside", "inspect", "x.csv", "--skip-bad-rows", "cap-a"], ["cap-a.csv"])
        # Values that are no file names get nothing, and neither does a command without
        # positionals.
        case(["lopside", "measure", "--zero", ""], [])
        case(["lopside", "lot", "--jobs", ""], [])
        case(["lopside", "trend", ""], [])
        case(["lopside", "unknown", ""], [])
        # Every command's options, exactly as its --help lists them.
        for command in a.commands:
            case(["lopside", command, "-"], help_flags(help_text(lopside, command)))
    print("bash completion: commands, options, values and files as expected")


def zsh_function(script: str, name: str) -> str:
    m = re.search(rf"^{name}\(\) \{{\n(.*?)^\}}$", script, re.S | re.M)
    expect(m is not None, f"no function {name} in the zsh completion")
    return m.group(1)


def check_zsh_options(a) -> None:
    script = (a.prefix / COMPLETION_ZSH).read_text()
    lopside = a.prefix / "bin/lopside"
    expect(script.startswith("#compdef lopside\n"), "the zsh completion lacks '#compdef lopside'")
    top = help_text(lopside)
    main = zsh_function(script, "_lopside")
    array = re.search(r"^\s+commands=\(\n(.*?)^\s+\)$", main, re.S | re.M)
    expect(array is not None, "no commands=( … ) in _lopside")
    listed = re.findall(r"^\s+'(\w+):", array.group(1), re.M)
    expect(listed == help_subcommands(top), f"zsh offers the commands {listed}")
    for command in a.commands:
        help_ = help_text(lopside, command)
        body = zsh_function(script, f"_lopside_{command}")
        names = []
        for spec in re.findall(r"^    (.*?) ?\\?$", body, re.M):
            if m := re.match(r"'(?:\([^)]*\))?\*?'?\{([^}]*)\}", spec):
                names += [n.rstrip("=") for n in m.group(1).split(",")]
            elif m := re.match(r"'(?:\([^)]*\))?\*?(-[\w-]+)", spec):
                names.append(m.group(1))
        expect(names == help_flags(help_),
               f"zsh offers for {command} {names}, --help prints {help_flags(help_)}")
        expect(re.search(r"'--json=\[[^\n]*:_files'", body) is not None
               or "--json" not in names, f"{command}: --json does not complete file names")
    print("zsh completion: every command's options as --help prints them")


def check_zsh_syntax(a) -> int:
    zsh = shutil.which("zsh")
    if not zsh:
        print("zsh is not installed: the syntax check of the zsh completion is skipped")
        return SKIP
    done = run([zsh, "-n", a.prefix / COMPLETION_ZSH], env=plain_env())
    expect(done.returncode == 0, "zsh -n:\n" + done.stderr.decode())
    print("zsh -n: no syntax errors")
    return 0


def cpack_setting(config: str, name: str) -> str | None:
    m = re.search(rf'^set\({name} "([^"]*)"\)', config, re.M)
    return m.group(1) if m else None


def check_deb(a) -> None:
    for tool in ("cpack", "dpkg-deb", "dpkg-shlibdeps"):
        expect(shutil.which(tool) is not None, f"{tool} is missing (dpkg-dev, cmake)")
    config_path = a.build / "CPackConfig.cmake"
    config = config_path.read_text()
    # cpack installs the component "lopside" of this build, stripped, under /usr ...
    projects = cpack_setting(config, "CPACK_INSTALL_CMAKE_PROJECTS")
    expect(projects == f"{a.build.resolve()};lopside;lopside;/",
           f"CPACK_INSTALL_CMAKE_PROJECTS is {projects!r}")
    expect(cpack_setting(config, "CPACK_STRIP_FILES") == "ON", "CPACK_STRIP_FILES is not ON")
    expect(cpack_setting(config, "CPACK_PACKAGING_INSTALL_PREFIX") == "/usr",
           "CPACK_PACKAGING_INSTALL_PREFIX is not /usr")
    with tempfile.TemporaryDirectory(prefix="lopside-deb-") as tmp:
        # ... but first it builds the target "preinstall", that is everything: tests and
        # benchmarks included, many minutes when only the program is built. This script does
        # the same install as that setting without the build (what cpack does for a CMake
        # project: the component, CMAKE_INSTALL_DO_STRIP, the packaging prefix).
        script = Path(tmp) / "install-component.cmake"
        script.write_text('set(CMAKE_INSTALL_PREFIX "${CPACK_PACKAGING_INSTALL_PREFIX}")\n'
                          "set(CMAKE_INSTALL_COMPONENT lopside)\n"
                          "set(CMAKE_INSTALL_DO_STRIP 1)\n"
                          f'include("{a.build.resolve()}/cmake_install.cmake")\n')
        done = run(["cpack", "-G", "DEB", "--config", config_path, "-B", tmp,
                    "-D", "CPACK_INSTALL_CMAKE_PROJECTS=", "-D", f"CPACK_INSTALL_SCRIPTS={script}"],
                   cwd=tmp)
        expect(done.returncode == 0,
               f"cpack: exit {done.returncode}\n{done.stdout.decode()}{done.stderr.decode()}")
        debs = list(Path(tmp).glob("*.deb"))
        arch = run(["dpkg", "--print-architecture"]).stdout.decode().strip()
        expect([d.name for d in debs] == [f"lopside_{a.project_version}-1_{arch}.deb"],
               f"cpack made {[d.name for d in debs]}")
        deb = debs[0]

        def field(name: str) -> str:
            return run(["dpkg-deb", "-f", deb, name]).stdout.decode().strip()

        expect(field("Package") == "lopside", f"Package: {field('Package')}")
        expect(field("Version") == f"{a.project_version}-1", f"Version: {field('Version')}")
        expect(field("Architecture") == arch, f"Architecture: {field('Architecture')}")
        expect(field("Section") in ("electronics", "science"), f"Section: {field('Section')}")
        expect(re.fullmatch(r"[^<>]+ <[^@\s]+@[^>\s]+\.invalid>", field("Maintainer")) is not None,
               f"Maintainer: {field('Maintainer')}")
        description = field("Description")
        expect("DC" in description.split("\n")[0] and len(description.split("\n")) > 3,
               f"Description: {description!r}")
        depends = [d.strip() for d in field("Depends").split(",")]
        names = [d.split()[0] for d in depends]
        for wanted in (r"libsndfile1", r"libfftw3-double3", r"libc6", r"libstdc\+\+6"):
            expect(any(re.fullmatch(wanted, n) for n in names), f"Depends lacks {wanted}: "
                                                                 f"{field('Depends')}")
        # dpkg-shlibdeps gives the versions from the libraries' symbols files.
        expect(all(re.search(r"\(>= [^)]+\)", d) for d in depends
                   if d.startswith(("libsndfile1 ", "libfftw3-double3 ", "libc6 "))),
               f"Depends without versions (not from dpkg-shlibdeps?): {field('Depends')}")

        listing = run(["dpkg-deb", "-c", deb]).stdout.decode()
        files = {line.split()[-1].lstrip(".") for line in listing.splitlines()
                 if not line.startswith("d")}
        wanted_files = {"/usr/" + f for f in expected_files(a.commands)}
        expect(files == wanted_files, f"the .deb holds {sorted(files)}, expected "
                                      f"{sorted(wanted_files)}")
        size = next((int(line.split()[2]) for line in listing.splitlines()
                     if line.endswith("./usr/bin/lopside")), 0)
        built = (a.build / "lopside").stat().st_size
        expect(0 < size < built, f"/usr/bin/lopside has {size} bytes, the built one {built}: "
                                 "not stripped?")
        print(run(["dpkg-deb", "-I", deb]).stdout.decode())
        print(listing)


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--build", type=Path, required=True)
    ap.add_argument("--source", type=Path, required=True)
    ap.add_argument("--prefix", type=Path, required=True)
    ap.add_argument("--project-version", required=True)
    ap.add_argument("--commands", required=True, help="separated by commas")
    ap.add_argument("check")
    ap.add_argument("arg", nargs="?")
    a = ap.parse_args()
    a.commands = [c for c in a.commands.split(",") if c]
    checks = {
        "install": lambda: check_install(a),
        "version": lambda: check_version(a),
        "man": lambda: check_man(a, a.arg),
        "bash": lambda: check_bash(a),
        "zsh-options": lambda: check_zsh_options(a),
        "zsh-syntax": lambda: check_zsh_syntax(a),
        "deb": lambda: check_deb(a),
    }
    try:
        return checks[a.check]() or 0
    except Failure as e:
        print(f"FAILED: {e}", file=sys.stderr)
        return 1


if __name__ == "__main__":
    sys.exit(main())
