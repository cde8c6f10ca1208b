"""Save an edited study into its own file's text: only the values that changed are rewritten.

A study file is the user's: its comments ("# pt uncooperative, PT not seen"), key order, quoting,
blank lines and the values nobody touched all stay as they were. The page posts the whole study;
what changed is found by comparing the study as it was opened (or last saved) with the study
posted, both as the plain data of a study file (:func:`~diagram.reading.plain.study_data`), and
only those changes are applied to the file's own tree: a YAML file read with ruamel.yaml's
round-trip loader (comments and styles kept), a JSON file read in its key order.

The tree is then written out, and every line that no change touched is copied back from the
original text (:func:`keep_lines`), so whatever the writer would lay out differently (an
indentation it does not use, a line it would wrap) stays byte for byte as the user wrote it. The
original text was validated by the study loader when it was opened (anchors, tags and nesting
refused), before ruamel.yaml reads it here.
"""

from __future__ import annotations

import datetime as dt
import io
import itertools
import json
import re
from collections.abc import Callable
from difflib import SequenceMatcher
from typing import Any

from diagram import anatomy

Path_ = tuple[str | int, ...]
_DATE = re.compile(r"\d{4}-\d{2}-\d{2}")


def kept_text(
    original: str,
    json_file: bool,
    before: dict[str, Any],
    after: dict[str, Any],
    reads_back: Callable[[str], bool],
) -> str:
    """Return ``original`` (a study file's text) with the changes from ``before`` to ``after``.

    ``before`` and ``after`` are study file data as :func:`study_data` gives them; ``before``
    must be the data of ``original``. ``reads_back`` tells whether a text reads back to
    ``after``: the text with every untouched line the original's is taken when it does, else
    the writer's own layout of the changed tree (comments still kept). The line ends (LF or
    CRLF) and a leading byte-order mark are those of the original. Raise ValueError when
    neither reads back.
    """
    bom = "\ufeff" if original.startswith("\ufeff") else ""
    text = original[len(bom) :]
    crlf = "\r\n" in text
    if crlf:
        text = text.replace("\r\n", "\n")
    write = _json_writer(text) if json_file else _yaml_writer(text)
    try:
        tree = write.load(text)
        base = write.dump(tree)
        apply_changes(tree, before, after, (), write.fresh)
        changed = write.dump(tree)
    except ValueError:
        raise
    except Exception as err:  # the round-trip reader refusing what the loader accepted
        raise ValueError(f"{type(err).__name__}: {err}") from None
    for candidate in (keep_lines(text, base, changed), changed):
        out = bom + (candidate.replace("\n", "\r\n") if crlf else candidate)
        if reads_back(out):
            return out
    raise ValueError("the changed text does not read back to the study on the page")


class _Writer:
    """Read a study file's text into a tree, write a tree back; make new nodes like siblings."""

    def load(self, text: str) -> Any:
        raise NotImplementedError

    def dump(self, tree: Any) -> str:
        raise NotImplementedError

    def fresh(self, value: Any, sibling: Any) -> Any:
        return value


class _YamlWriter(_Writer):
    def __init__(self, mapping: int, sequence: int, offset: int) -> None:
        from ruamel.yaml import YAML

        self.yaml = YAML(typ="rt", pure=True)
        self.yaml.preserve_quotes = True
        self.yaml.width = 4096  # never wrap a long line the user wrote on one line
        self.yaml.indent(mapping=mapping, sequence=sequence, offset=offset)

    def load(self, text: str) -> Any:
        return self.yaml.load(text)

    def dump(self, tree: Any) -> str:
        out = io.StringIO()
        self.yaml.dump(tree, out)
        return out.getvalue()

    def fresh(self, value: Any, sibling: Any) -> Any:
        """Return ``value`` as a YAML node laid out like ``sibling`` (flow or block)."""
        from ruamel.yaml.comments import CommentedMap, CommentedSeq

        flow = sibling is not None and hasattr(sibling, "fa") and sibling.fa.flow_style()
        if isinstance(value, dict):
            node: Any = CommentedMap()
            for key, item in value.items():
                like = sibling.get(key) if isinstance(sibling, dict) else None
                node[key] = self.fresh(item, like)
        elif isinstance(value, list):
            node = CommentedSeq(self.fresh(item, None) for item in value)
        else:
            return value
        if flow:
            node.fa.set_flow_style()
        return node


class _JsonWriter(_Writer):
    def __init__(self, indent: int | str | None, ascii_only: bool) -> None:
        self.indent = indent
        self.ascii_only = ascii_only

    def load(self, text: str) -> Any:
        return json.loads(text)

    def dump(self, tree: Any) -> str:
        return json.dumps(tree, indent=self.indent, ensure_ascii=self.ascii_only) + "\n"


_BLOCK_PARENT = re.compile(r"^( *)[^\s#-][^#]*:\s*(#.*)?$")
_ITEM = re.compile(r"^( *)- +")


def yaml_indents(text: str) -> tuple[int, int, int]:
    """Return the file's block indentation: mapping, sequence item, dash offset (ruamel's terms).

    Read from the first nested mapping and the first block list under a key; the examples'
    layout (2, 4, 2) where the file has none.
    """
    mapping = sequence = offset = None
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    for line, following in itertools.pairwise(lines):
        parent = _BLOCK_PARENT.match(line)
        if parent is None:
            continue
        depth = len(parent.group(1))
        item = _ITEM.match(following)
        inner = len(following) - len(following.lstrip(" "))
        if item is not None and sequence is None and len(item.group(1)) >= depth:
            offset = len(item.group(1)) - depth
            sequence = len(item.group(0)) - depth
        elif item is None and mapping is None and inner > depth:
            mapping = inner - depth
    mapping = mapping or 2
    if sequence is None:
        sequence, offset = mapping + 2, mapping
    return mapping, max(sequence, (offset or 0) + 2), offset or 0


def _yaml_writer(text: str) -> _Writer:
    return _YamlWriter(*yaml_indents(text))


def _json_writer(text: str) -> _Writer:
    """Return a JSON writer with the file's indentation (spaces or a tab) and escaping."""
    found = re.search(r"[\[{,]\s*?\n([ \t]+)\S", text)
    indent: int | str | None = None
    if found is not None:
        unit = found.group(1)
        indent = unit if "\t" in unit else len(unit)
    ascii_only = text.isascii() and "\\u" in text
    return _JsonWriter(indent, ascii_only)


def _key(path: Path_, key: object) -> object:
    """Return the study data's key for a key written in the file (segment aliases resolved)."""
    if path and path[-1] == "segments" and isinstance(key, str):
        return anatomy.resolve(key) or key
    return key


def _same(a: Any, b: Any) -> bool:
    return json.dumps(a, sort_keys=True, default=str) == json.dumps(b, sort_keys=True, default=str)


Fresh = Callable[[Any, Any], Any]


def apply_changes(tree: Any, before: Any, after: Any, path: Path_, fresh: Fresh) -> Any:
    """Change ``tree`` (the file's node for ``before``) to hold ``after``; return the node.

    Mappings and lists are changed in place, so whatever the file held around a changed value
    (comments, styles, the keys that did not change) stays; a scalar that changed is returned
    replaced, in the quoting style of the value it replaces.
    """
    if _same(before, after):
        return tree
    if isinstance(tree, dict) and isinstance(before, dict) and isinstance(after, dict):
        _change_mapping(tree, before, after, path, fresh)
        return tree
    if isinstance(tree, list) and isinstance(before, list) and isinstance(after, list):
        _change_list(tree, before, after, path, fresh)
        return tree
    return _scalar(tree, after, fresh)


def _change_mapping(
    tree: dict[Any, Any], before: dict[str, Any], after: dict[str, Any], path: Path_, fresh: Fresh
) -> None:
    written = {_key(path, k): k for k in tree}  # study data key -> the key as written
    for key in list(written):
        if key in before and key not in after:
            _carry_comments(tree, written[key])
            del tree[written.pop(key)]
    order = list(after)
    for key, value in after.items():
        here = (*path, key)
        if key in written:
            old = written[key]
            tree[old] = apply_changes(tree[old], before.get(key), value, here, fresh)
            continue
        if key in before and _same(before[key], value):
            continue  # a value the file leaves out (a default), still the same
        sibling = next((tree[k] for k in tree if isinstance(tree[k], type(value))), None)
        node = fresh(value, sibling)
        place = _place([_key(path, k) for k in tree], order, key)
        if hasattr(tree, "insert"):
            tree.insert(place, key, node)
        else:
            items = list(tree.items())
            items.insert(place, (key, node))
            tree.clear()
            tree.update(items)
        written[key] = key


def _place(data_keys: list[Any], order: list[str], key: str) -> int:
    """Return where a new key goes: after the last key the study data puts before it."""
    rank: dict[Any, int] = {k: i for i, k in enumerate(order)}
    mine = rank[key]
    place = 0
    for i, k in enumerate(data_keys):
        if rank.get(k, -1) < mine:
            place = i + 1
    return place


def _change_list(
    tree: list[Any], before: list[Any], after: list[Any], path: Path_, fresh: Fresh
) -> None:
    """Change the file's list item by item: kept items stay, removed go, added come in place."""
    if len(tree) != len(before):  # the file's list is the study's, item for item
        raise ValueError(f"{'.'.join(map(str, path))}: the file does not hold the study opened")
    keys = [json.dumps(v, sort_keys=True, default=str) for v in before]
    new_keys = [json.dumps(v, sort_keys=True, default=str) for v in after]
    ops = SequenceMatcher(None, keys, new_keys, autojunk=False).get_opcodes()
    for tag, i1, i2, j1, j2 in reversed(ops):  # from the end, so earlier indexes hold
        if tag == "equal":
            continue
        paired = min(i2 - i1, j2 - j1)
        for k in range(paired):
            here = (*path, i1 + k)
            tree[i1 + k] = apply_changes(tree[i1 + k], before[i1 + k], after[j1 + k], here, fresh)
        for i in range(i2 - 1, i1 + paired - 1, -1):
            _carry_comments(tree, i)
            del tree[i]
        sibling = tree[i1 + paired - 1] if i1 + paired > 0 else (tree[0] if tree else None)
        for k in range(j1 + paired, j2):
            tree.insert(i1 + (k - j1), fresh(after[k], sibling))


def _carry_comments(tree: Any, key: Any) -> None:
    """Hand the comment lines written after a removed entry to the entries around it.

    ruamel.yaml keeps the comment lines that follow an entry with that entry, though they
    usually speak of what comes next; removing the entry would remove them too. They go to the
    end of the entry before, or before the entry after when the first entry is removed.
    """
    if not hasattr(tree, "ca"):
        return  # JSON: no comments
    keys = list(tree) if isinstance(tree, dict) else list(range(len(tree)))
    at = keys.index(key)
    gone = _last_leaf(tree, key)
    token = gone[0].ca.items.get(gone[1], [None] * 4)[gone[2]]
    if token is None or "\n" not in token.value.rstrip("\n"):
        return
    rest = token.value.split("\n", 1)[1]
    if not rest.strip():
        return
    from ruamel.yaml.error import CommentMark
    from ruamel.yaml.tokens import CommentToken

    if at > 0:
        holder, slot, pos = _last_leaf(tree, keys[at - 1])
        entry = holder.ca.items.setdefault(slot, [None] * 4)
        if entry[pos] is None:
            entry[pos] = CommentToken("\n" + rest, token.start_mark, None)
        else:
            entry[pos].value = entry[pos].value.rstrip("\n") + "\n" + rest
    elif len(keys) > 1 and isinstance(tree, dict):  # before the next key
        commented: Any = tree
        entry = commented.ca.items.setdefault(keys[1], [None] * 4)
        entry[1] = [CommentToken(rest, CommentMark(0), None), *(entry[1] or [])]
    elif len(keys) > 1:  # before the list's new first item
        head = tree.ca.comment or [None, None]
        tree.ca.comment = [head[0], [*(head[1] or []), CommentToken(rest, CommentMark(0), None)]]


def _last_leaf(tree: Any, key: Any) -> tuple[Any, Any, int]:
    """Return where the comment after the entry ``tree[key]`` is kept: (holder, its key, slot)."""
    node: Any = tree[key]
    while isinstance(node, dict | list) and len(node) and hasattr(node, "ca"):
        if getattr(node, "fa").flow_style():  # noqa: B009 (ruamel's nodes are untyped here)
            break  # a flow collection's comment sits after it, on its parent's entry
        tree, key = node, (list(node)[-1] if isinstance(node, dict) else len(node) - 1)
        node = tree[key]
    return tree, key, 2 if isinstance(tree, dict) else 0


def _scalar(old: Any, new: Any, fresh: Fresh) -> Any:
    """Return the new value written as the old one was (quoted text stays quoted, dates dates)."""
    if isinstance(new, dict | list):
        return fresh(new, old)
    if isinstance(old, dt.date) and isinstance(new, str) and _DATE.fullmatch(new):
        return dt.date.fromisoformat(new)
    if isinstance(old, str) and isinstance(new, str) and type(old) is not str:
        return type(old)(new)  # ruamel's quoted-scalar classes keep the quotes
    return new


def keep_lines(original: str, base: str, edited: str) -> str:
    """Return ``edited`` with the original's lines wherever the edit did not touch them.

    ``base`` is the writer's text of the unchanged tree and ``edited`` of the changed one. Where
    the writer lays a stretch of lines out differently from ``original`` and no change falls in
    that stretch, the original's lines are put back; a stretch a change falls in is written anew.
    """
    if base == original:
        return edited
    o_lines = original.splitlines(keepends=True)
    b_lines = base.splitlines(keepends=True)
    e_lines = edited.splitlines(keepends=True)
    to_edited: dict[int, int] = {}  # a base line no change touched -> its line in edited
    for tag, i1, i2, j1, _ in _opcodes(b_lines, e_lines):
        if tag == "equal":
            to_edited.update((i1 + k, j1 + k) for k in range(i2 - i1))
    swaps: list[tuple[int, int, list[str]]] = []  # edited[start:end] -> original lines
    for tag, a1, a2, b1, b2 in _opcodes(o_lines, b_lines):
        if tag == "equal":
            continue
        span = _untouched(to_edited, b1, b2, len(b_lines), len(e_lines))
        if span is not None:
            swaps.append((span[0], span[1], o_lines[a1:a2]))
    out: list[str] = []
    at = 0
    for start, end, lines in sorted(swaps, key=lambda s: (s[0], s[1])):
        if start < at:
            continue  # never happens for one diff's disjoint stretches; kept safe
        out += e_lines[at:start]
        out += lines
        at = end
    out += e_lines[at:]
    return "".join(out)


def _opcodes(a: list[str], b: list[str]) -> list[tuple[str, int, int, int, int]]:
    return list(SequenceMatcher(None, a, b, autojunk=False).get_opcodes())


def _untouched(
    to_edited: dict[int, int], b1: int, b2: int, n_base: int, n_edited: int
) -> tuple[int, int] | None:
    """Return the lines of edited that hold base[b1:b2] unchanged, or None if a change is there.

    The stretch and its two neighbouring lines must all be untouched and in order, so a line
    added next to the stretch is not taken for part of it.
    """
    before = to_edited.get(b1 - 1, -1) if b1 > 0 else -1
    after = to_edited.get(b2, n_edited) if b2 < n_base else n_edited
    if (b1 > 0 and b1 - 1 not in to_edited) or (b2 < n_base and b2 not in to_edited):
        return None
    lines = [to_edited.get(b) for b in range(b1, b2)]
    expected = list(range(before + 1, before + 1 + (b2 - b1)))
    if lines != expected or before + 1 + (b2 - b1) != after:
        return None
    return before + 1, after
