"""Reading study-file YAML with limits: size, nesting depth, alias expansion.

A study file may come from someone else, so reading it must end quickly and in
one line whatever it holds. Three limits are checked, each before the work it
guards:

- **size**: the bytes of the file (or text) are counted before anything is
  parsed, so a 60 MB value is refused without being scanned;
- **depth**: the event stream of the parser (which is iterative, not recursive)
  is scanned first, and nesting deeper than ``max_depth`` stops the scan, so
  5,000 nested brackets never reach the recursive composer;
- **expansion**: while scanning, every anchor's expanded size is counted, so an
  alias bomb (``b: [*a, *a, ...]`` nine levels deep) is refused by arithmetic,
  never by building it, and an alias that refers to its own anchor is refused.

Only then is the text loaded, with a safe loader (no tag can build a Python
object), YAML 1.2 floats (``1e-3`` is a number) and duplicate keys refused.
"""

from __future__ import annotations

import os
import re
import stat
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import yaml

from ..exceptions import SpecError
from ..table import sanitise

__all__ = [
    "DEFAULT_LIMITS",
    "YamlLimits",
    "load_yaml",
    "read_study_text",
]

_MB = 1_000_000


@dataclass(frozen=True)
class YamlLimits:
    """Limits on a study file.

    Parameters
    ----------
    max_bytes : int, default=1_000_000
        Size of the file in bytes (UTF-8).
    max_depth : int, default=64
        Nesting of lists and mappings.
    max_nodes : int, default=100_000
        Values after every alias is expanded (scalars, lists and mappings).
    """

    max_bytes: int = _MB
    max_depth: int = 64
    max_nodes: int = 100_000


DEFAULT_LIMITS = YamlLimits()

_BaseLoader: type[yaml.SafeLoader] = getattr(yaml, "CSafeLoader", yaml.SafeLoader)

# YAML 1.2 floats: ``1e-3`` and ``1E5`` are numbers (YAML 1.1 reads them as text).
_FLOAT_12 = re.compile(
    r"""^(?:[-+]?(?:[0-9][0-9_]*)\.[0-9_]*(?:[eE][-+]?[0-9]+)?
    |[-+]?(?:[0-9][0-9_]*)(?:[eE][-+]?[0-9]+)
    |\.[0-9_]+(?:[eE][-+][0-9]+)?
    |[-+]?\.(?:inf|Inf|INF)
    |\.(?:nan|NaN|NAN))$""",
    re.VERBOSE,
)


class _Duplicate(yaml.YAMLError):
    def __init__(self, key: Any, line: int) -> None:
        super().__init__(f"key {key!r} appears twice in one mapping (line {line})")
        self.key = key
        self.line = line


class StudyYamlLoader(_BaseLoader):  # type: ignore[valid-type,misc]
    """Safe loader with YAML 1.2 floats that refuses duplicate keys."""

    def construct_mapping(self, node: Any, deep: bool = False) -> dict[Any, Any]:
        seen: set[Any] = set()
        for key_node, _ in node.value:
            if key_node.tag == "tag:yaml.org,2002:merge":
                continue
            key = self.construct_object(key_node, deep=deep)
            try:
                dup = key in seen
            except TypeError:
                continue  # unhashable: the base class reports it
            if dup:
                raise _Duplicate(key, key_node.start_mark.line + 1)
            seen.add(key)
        return super().construct_mapping(node, deep=deep)  # type: ignore[no-any-return]


StudyYamlLoader.add_implicit_resolver(
    "tag:yaml.org,2002:float", _FLOAT_12, list("-+0123456789.")
)


def _size_text(n: int) -> str:
    return f"{n / _MB:.1f} MB" if n >= _MB // 10 else f"{n} bytes"


def read_study_text(
    path: str | os.PathLike[str], *, limits: YamlLimits = DEFAULT_LIMITS
) -> str:
    """Read a study file: a regular file, at most ``limits.max_bytes``, UTF-8.

    The file is opened without blocking and checked on the open descriptor, so a
    FIFO, a device or a file that grows while it is read cannot hang the reader.

    Raises
    ------
    SpecError
        One line naming the file and the problem.
    """
    p = Path(path)
    where = f"study file '{_short(str(p))}'"
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0)
    try:
        fd = os.open(p, flags)
    except FileNotFoundError:
        raise SpecError(
            f"{where} does not exist; give the path to a .yaml study file"
        ) from None
    except IsADirectoryError:
        raise SpecError(
            f"{where} is a folder; give the path to a .yaml study file"
        ) from None
    except OSError as exc:
        raise SpecError(
            f"{where} cannot be opened ({exc.strerror}); check the path"
        ) from None
    try:
        st = os.fstat(fd)
        if stat.S_ISDIR(st.st_mode):
            raise SpecError(f"{where} is a folder; give the path to a .yaml study file")
        if not stat.S_ISREG(st.st_mode):
            raise SpecError(
                f"{where} is not a regular file (a device, pipe or socket); save the study as a file"
            )
        if st.st_size > limits.max_bytes:
            raise SpecError(
                f"{where} is {_size_text(st.st_size)}; a study file may be at most "
                f"{_size_text(limits.max_bytes)} (put data in the table, not in the study file)"
            )
        chunks: list[bytes] = []
        left = limits.max_bytes + 1
        while left > 0:
            chunk = os.read(fd, min(left, 1 << 16))
            if not chunk:
                break
            chunks.append(chunk)
            left -= len(chunk)
    except OSError as exc:
        raise SpecError(f"{where} cannot be read ({exc.strerror})") from None
    finally:
        os.close(fd)
    data = b"".join(chunks)
    if len(data) > limits.max_bytes:
        raise SpecError(
            f"{where} is larger than {_size_text(limits.max_bytes)}, the limit for a study file "
            f"(put data in the table, not in the study file)"
        )
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise SpecError(
            f"{where} is not UTF-8 text (byte {exc.start} cannot be decoded); save it as UTF-8"
        ) from None


def _short(text: str, limit: int = 120) -> str:
    return sanitise(text, limit=limit)


def _line(mark: Any) -> str:
    return f" at line {mark.line + 1}" if mark is not None else ""


def _scan(text: str, where: str, limits: YamlLimits) -> None:
    """Walk the parser's events: depth, expanded size and self-referencing aliases."""
    # One open collection: [anchor or None, expanded size so far]
    stack: list[list[Any]] = []
    sizes: dict[str, int] = {}
    open_anchors: set[str] = set()
    total = 0
    used_alias: str | None = None

    def add(n: int, mark: Any) -> None:
        nonlocal total
        if stack:
            stack[-1][1] += n
            # any open collection already larger than the whole limit is refused now
            if stack[-1][1] > limits.max_nodes:
                raise _too_many(where, limits, used_alias, mark)
        else:
            total += n
            if total > limits.max_nodes:
                raise _too_many(where, limits, used_alias, mark)

    for event in yaml.parse(text, Loader=StudyYamlLoader):
        if isinstance(event, (yaml.SequenceStartEvent, yaml.MappingStartEvent)):
            if len(stack) >= limits.max_depth:
                raise SpecError(
                    f"{where} nests lists or mappings more than {limits.max_depth} levels "
                    f"deep{_line(event.start_mark)}; a study file needs far fewer"
                )
            anchor = event.anchor
            stack.append([anchor, 1])
            if anchor is not None:
                open_anchors.add(anchor)
        elif isinstance(event, (yaml.SequenceEndEvent, yaml.MappingEndEvent)):
            anchor, size = stack.pop()
            if anchor is not None:
                open_anchors.discard(anchor)
                sizes[anchor] = size
            add(size, event.start_mark)
        elif isinstance(event, yaml.ScalarEvent):
            if event.anchor is not None:
                sizes[event.anchor] = 1
            add(1, event.start_mark)
        elif isinstance(event, yaml.AliasEvent):
            name = str(event.anchor)
            if name in open_anchors:
                raise SpecError(
                    f"{where}: alias *{_short(name, 40)}{_line(event.start_mark)} refers to the list or "
                    f"mapping it is inside of; a value cannot contain itself"
                )
            if name not in sizes:
                raise SpecError(
                    f"{where}: alias *{_short(name, 40)}{_line(event.start_mark)} names no anchor defined "
                    f"before it; define &{_short(name, 40)} first"
                )
            used_alias = name
            add(sizes[name], event.start_mark)


def _too_many(
    where: str, limits: YamlLimits, alias: str | None, mark: Any
) -> SpecError:
    via = f" (aliases such as *{_short(alias, 40)} repeat values)" if alias else ""
    return SpecError(
        f"{where} expands to more than {limits.max_nodes} values{via}{_line(mark)}; "
        f"a study file needs far fewer"
    )


def load_yaml(
    text: str, *, where: str = "study", limits: YamlLimits = DEFAULT_LIMITS
) -> Any:
    """Load study-file YAML under ``limits``; every failure is one ``SpecError`` line.

    Parameters
    ----------
    text : str
        The YAML text.
    where : str, default="study"
        How messages name the source, e.g. ``"study file 'x.yaml'"``.
    limits : YamlLimits
        Size, depth and expansion limits.

    Returns
    -------
    object
        Plain Python data (dict, list, str, int, float, bool, None, date).
    """
    n_bytes = len(text.encode("utf-8", errors="surrogatepass"))
    if n_bytes > limits.max_bytes:
        raise SpecError(
            f"{where} is {_size_text(n_bytes)}; a study file may be at most {_size_text(limits.max_bytes)} "
            f"(put data in the table, not in the study file)"
        )
    try:
        _scan(text, where, limits)
        return yaml.load(text, Loader=StudyYamlLoader)
    except SpecError:
        raise
    except _Duplicate as exc:
        raise SpecError(
            f"{where}: key '{_short(str(exc.key), 60)}' appears twice in one mapping "
            f"(line {exc.line}); keep one (YAML would silently use the last)"
        ) from None
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        problem = getattr(exc, "problem", None)
        if not problem:
            problem = (str(exc).strip().splitlines() or ["malformed YAML"])[0]
        raise SpecError(
            f"{where} is not valid YAML{_line(mark)}: {_short(str(problem), 120)}"
        ) from None
    except ValueError as exc:
        if "digits" in str(exc):
            raise SpecError(
                f"{where} holds a number with thousands of digits; no setting needs one, "
                f"shorten it"
            ) from None
        raise SpecError(
            f"{where} holds a value that cannot be read: {_short(str(exc), 120)}"
        ) from None
    except RecursionError:  # pragma: no cover - the depth limit stops this first
        raise SpecError(f"{where} nests too deeply to be read") from None
