"""A small Dockerfile reader and the static rules the service's image must follow.

Enough of the Dockerfile syntax for these checks (Dockerfile reference, "Format"): one
instruction per logical line, a trailing backslash continues it, lines starting with ``#`` are
comments (also inside a continuation), JSON arrays are the exec form. ARG substitution in FROM
is deliberately not supported: the base image must be written out so that it can be checked.
"""

import json
import re
import shlex
from dataclasses import dataclass, field

COMPILERS = ("gcc", "g++", "cc", "c++", "clang", "build-essential", "gfortran", "make", "cmake")
REMOTE_SOURCE = re.compile(r"^(https?|ftp)://|^git@|\.git(#.*)?$", re.IGNORECASE)
EXACT_VERSION_TAG = re.compile(r"^\d+\.\d+\.\d+([.-][\w.-]+)?$")
DIGEST = re.compile(r"^sha256:[0-9a-f]{64}$")


@dataclass
class Instruction:
    keyword: str
    arguments: str

    def exec_form(self):
        """The JSON array of an exec-form CMD/ENTRYPOINT/RUN, or None for the shell form."""
        text = self.arguments.strip()
        if text.startswith("["):
            try:
                return json.loads(text)
            except json.JSONDecodeError:
                return None
        return None


@dataclass
class Stage:
    base: str
    name: str | None
    instructions: list = field(default_factory=list)

    def all(self, keyword):
        return [item for item in self.instructions if item.keyword == keyword]

    def env(self):
        values = {}
        for item in self.all("ENV"):
            for pair in shlex.split(item.arguments):
                key, _, value = pair.partition("=")
                values[key] = value
        return values


def logical_lines(text):
    lines, pending = [], ""
    for raw in text.splitlines():
        stripped = raw.strip()
        if stripped.startswith("#") or (not stripped and pending):
            continue
        if stripped.endswith("\\"):
            pending += stripped[:-1].rstrip() + " "
            continue
        line = (pending + stripped).strip()
        pending = ""
        if line:
            lines.append(line)
    if pending.strip():
        lines.append(pending.strip())
    return lines


def parse(text):
    """Stages of a Dockerfile in order; instructions before the first FROM are dropped."""
    stages = []
    for line in logical_lines(text):
        keyword, _, arguments = line.partition(" ")
        keyword = keyword.upper()
        if keyword == "FROM":
            words = [word for word in arguments.split() if not word.startswith("--")]
            name = words[2] if len(words) >= 3 and words[1].upper() == "AS" else None
            stages.append(Stage(base=words[0], name=name))
        elif stages:
            stages[-1].instructions.append(Instruction(keyword, arguments.strip()))
    return stages


def split_image(reference):
    """(repository, tag, digest) of an image reference; tag and digest may be None."""
    name, _, digest = reference.partition("@")
    last = name.rsplit("/", 1)[-1]
    tag = None
    if ":" in last:
        name, _, tag = name.rpartition(":")
    return name, tag, digest or None


def copy_sources(instruction):
    """Sources and options of a COPY/ADD (shell or exec form)."""
    words = instruction.exec_form() or shlex.split(instruction.arguments)
    options = [word for word in words if word.startswith("--")]
    paths = [word for word in words if not word.startswith("--")]
    return options, paths[:-1]


def lint(text, default_port):
    """Problems found in the Dockerfile `text`; an empty list means it passes every rule."""
    stages = parse(text)
    if not stages:
        return ["no FROM instruction"]
    problems = []
    stage_names = {stage.name for stage in stages if stage.name}
    for stage in stages:
        if stage.base in stage_names:
            continue
        if "$" in stage.base:
            problems.append(f"base image {stage.base} is not written out")
            continue
        _, tag, digest = split_image(stage.base)
        if tag is None or tag == "latest" or not EXACT_VERSION_TAG.match(tag):
            problems.append(f"base image {stage.base} is not pinned to an exact version tag")
        if digest is not None and not DIGEST.match(digest):
            problems.append(f"base image {stage.base} has a malformed digest")
        for item in stage.all("ADD"):
            _, sources = copy_sources(item)
            if any(REMOTE_SOURCE.search(source) for source in sources):
                problems.append(f"ADD of a remote source: {item.arguments}")

    final = stages[-1]
    users = final.all("USER")
    if not users:
        problems.append("final stage has no USER")
    else:
        user = users[-1].arguments.split(":")[0]
        if not user.isdigit():
            problems.append(f"final USER {user} is not a numeric uid")
        elif int(user) == 0:
            problems.append("final USER is root")

    healthchecks = final.all("HEALTHCHECK")
    if not healthchecks or healthchecks[-1].arguments.upper().startswith("NONE"):
        problems.append("final stage has no HEALTHCHECK")

    exposed = {int(word.split("/")[0]) for item in final.all("EXPOSE") for word in item.arguments.split()}
    if exposed != {default_port}:
        problems.append(f"EXPOSE {sorted(exposed)} differs from the default port {default_port}")

    for item in final.all("RUN"):
        words = set(re.split(r"[\s;&|()'\"=]+", item.arguments))
        found = sorted(words.intersection(COMPILERS))
        if found:
            problems.append(f"final stage installs or runs compilers {found}: {item.arguments}")
    return problems
