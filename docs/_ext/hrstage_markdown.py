"""Read the Markdown pages of ``docs/`` into Sphinx (our own small extension).

The narrative pages are plain Markdown so they read well on a code host and in an editor. This
extension turns the subset they use into reStructuredText and hands it to docutils' own parser:

* ATX headings (``#`` .. ``####``);
* paragraphs, bullet lists (``-``, ``*``) and numbered lists (``1.``), nested by indentation;
* fenced code blocks (three backticks, optional language);
* pipe tables with a header row (become ``list-table`` directives);
* inline code, ``**strong**``, ``*emphasis*``, ``[text](url)`` links, and block quotes (``>``).

Everything else is text: characters that mean something to reStructuredText (``*``, ``_``,
``|``, backslash, backticks) are escaped, so a page can never produce markup it did not ask for.
A link to another page of ``docs/`` (``[text](plot.md)``) becomes a cross-reference.
"""

from __future__ import annotations

import re

from docutils.parsers.rst import Parser as RstParser

__all__ = ["markdown_to_rst", "MarkdownParser", "setup"]

_HEADING = re.compile(r"^(#{1,6})\s+(.*?)\s*#*\s*$")
_FENCE = re.compile(r"^(\s*)(```+|~~~+)\s*([\w+-]*)\s*$")
_ITEM = re.compile(r"^(\s*)([-*+]|\d+[.)])\s+(.*)$")
_TABLE_SEP = re.compile(r"^\s*\|?\s*:?-{3,}:?\s*(\|\s*:?-{3,}:?\s*)*\|?\s*$")
_UNDERLINES = "=-~^\"'"
_LEXERS = {"python": "python", "py": "python", "bash": "bash", "sh": "bash", "shell": "bash", "console": "console",
           "pycon": "pycon", "json": "json", "yaml": "yaml", "toml": "toml", "ini": "ini", "make": "make",
           "text": "text", "": "text", "csv": "text", "html": "html", "xml": "xml"}

# inline tokens: code span, link, strong, emphasis (in that order of precedence)
_INLINE = re.compile(
    r"(?P<code>`+)(?P<codetext>.+?)(?P=code)"
    r"|\[(?P<ltext>[^\]]+)\]\((?P<url>[^)\s]+)\)"
    r"|\*\*(?P<strong>[^*]+?)\*\*"
    r"|(?<![\w*])\*(?P<em>[^*\s][^*]*?)\*(?![\w*])"
    r"|(?<![\w_])_(?P<em2>[^_\s][^_]*?)_(?![\w_])"
)


def _escape(text: str) -> str:
    """Plain text with every reStructuredText markup character escaped."""
    return re.sub(r"([\\`*_|<>\[\]])", r"\\\1", text)


def _join(pieces):
    """Join inline pieces; markup next to a word character gets an escaped space (renders as nothing)."""
    out = ""
    for kind, text in pieces:
        if kind == "markup":
            if out and (out[-1].isalnum() or out[-1] in ")]}'\"."):
                out += "\\ "
        elif out and out.endswith(("``", "**", "*", "__", "`")) and text[:1] and (text[0].isalnum() or text[0] in "([{'\""):
            out += "\\ "
        out += text
    return out


def inline(text: str, doc_pages=()) -> str:
    """Markdown inline markup of one line -> reStructuredText."""
    pieces, pos = [], 0
    for m in _INLINE.finditer(text):
        if m.start() > pos:
            pieces.append(("text", _escape(text[pos:m.start()])))
        if m.group("code"):
            code = m.group("codetext").strip()
            if "``" in code or code.endswith("\\"):
                pieces.append(("markup", ":literal:`" + code.replace("\\", "\\\\").replace("`", "\\`") + "`"))
            else:
                pieces.append(("markup", f"``{code}``"))
        elif m.group("ltext"):
            label, url = m.group("ltext"), m.group("url")
            page = url.split("#")[0]
            if page.endswith(".md") and "/" not in page and page[:-3] in doc_pages:
                pieces.append(("markup", f":doc:`{_escape(label).replace('<', '').replace('>', '')} <{page[:-3]}>`"))
            else:
                pieces.append(("markup", f"`{_escape(label).replace('<', '').replace('>', '')} <{url}>`__"))
        elif m.group("strong"):
            pieces.append(("markup", f"**{_escape(m.group('strong'))}**"))
        else:
            em = m.group("em") if m.group("em") is not None else m.group("em2")
            pieces.append(("markup", f"*{_escape(em)}*"))
        pos = m.end()
    if pos < len(text):
        pieces.append(("text", _escape(text[pos:])))
    return _join(pieces)


def _split_row(line: str):
    line = line.strip()
    if line.startswith("|"):
        line = line[1:]
    if line.endswith("|") and not line.endswith("\\|"):
        line = line[:-1]
    cells, cur, in_code = [], "", False
    for ch in line:
        if ch == "`":
            in_code = not in_code
        if ch == "|" and not in_code and not cur.endswith("\\"):
            cells.append(cur.strip())
            cur = ""
        else:
            cur += ch
    cells.append(cur.strip())
    return [c.replace("\\|", "|") for c in cells]


def _table(lines, indent, doc_pages):
    header = _split_row(lines[0])
    body = [_split_row(x) for x in lines[2:]]
    ncol = len(header)
    pad = " " * indent
    out = [f"{pad}.. list-table::", f"{pad}   :header-rows: 1", ""]
    for row in [header] + body:
        row = (row + [""] * ncol)[:ncol]
        for j, cell in enumerate(row):
            text = inline(cell, doc_pages) if cell else "\\ "
            out.append(f"{pad}   {'* -' if j == 0 else '  -'} {text}")
    out.append("")
    return out


def markdown_to_rst(text: str, doc_pages=()) -> str:
    """Convert one Markdown page (the subset described in the module docstring) to reST."""
    lines = text.replace("\t", "    ").splitlines()
    out: list[str] = []
    levels: dict[int, str] = {}
    i = 0
    list_stack: list[tuple[int, int]] = []  # (marker indent, content column) of open list items

    def blank():
        if out and out[-1].strip():
            out.append("")

    while i < len(lines):
        line = lines[i]
        stripped = line.strip()
        # fenced code
        m = _FENCE.match(line)
        if m:
            fence, lang = m.group(2), m.group(3).lower()
            indent = len(m.group(1))
            col = list_stack[-1][1] if list_stack and indent >= list_stack[-1][1] else 0
            if not (list_stack and indent >= list_stack[-1][1]):
                list_stack.clear()
            blank()
            out.append(" " * col + f".. code-block:: {_LEXERS.get(lang, 'text')}")
            out.append("")
            i += 1
            while i < len(lines) and not lines[i].strip().startswith(fence):
                code = lines[i][indent:] if lines[i][:indent].strip() == "" else lines[i].lstrip()
                out.append(" " * (col + 3) + code if code.strip() else "")
                i += 1
            i += 1
            out.append("")
            continue
        if not stripped:
            blank()
            i += 1
            continue
        # heading
        m = _HEADING.match(line)
        if m and not line.startswith(" "):
            list_stack.clear()
            level = len(m.group(1))
            if level not in levels:
                levels[level] = _UNDERLINES[len(levels)]
            title = inline(m.group(2), doc_pages)
            blank()
            out.extend([title, levels[level] * (len(title) + 2), ""])
            i += 1
            continue
        # table
        if stripped.startswith("|") and i + 1 < len(lines) and _TABLE_SEP.match(lines[i + 1]):
            block = []
            while i < len(lines) and lines[i].strip().startswith("|"):
                block.append(lines[i])
                i += 1
            indent = list_stack[-1][1] if list_stack and (len(line) - len(line.lstrip())) >= list_stack[-1][1] else 0
            if not indent:
                list_stack.clear()
            blank()
            out.extend(_table(block, indent, doc_pages))
            continue
        # block quote
        if stripped.startswith(">"):
            list_stack.clear()
            blank()
            while i < len(lines) and lines[i].strip().startswith(">"):
                q = lines[i].strip()[1:].strip()
                out.append("    " + inline(q, doc_pages) if q else "")
                i += 1
            out.append("")
            continue
        # horizontal rule
        if re.fullmatch(r"(-{3,}|\*{3,}|_{3,})", stripped):
            list_stack.clear()
            blank()
            out.extend(["----", ""])
            i += 1
            continue
        # list item
        m = _ITEM.match(line)
        if m:
            indent, marker, body = len(m.group(1)), m.group(2), m.group(3)
            while list_stack and indent < list_stack[-1][1]:
                top = list_stack.pop()
                if indent >= top[0]:
                    break  # a sibling of the item just closed
            base = list_stack[-1][1] if list_stack else 0
            rst_marker = "-" if marker in "-*+" else "#."
            blank()  # items separated by blank lines are still one list in reST
            list_stack.append((indent, base + len(rst_marker) + 1))
            out.append(" " * base + f"{rst_marker} " + inline(body, doc_pages))
            i += 1
            continue
        # paragraph line (continuation of a list item when indented under one)
        ind = len(line) - len(line.lstrip())
        if list_stack and ind >= list_stack[-1][0] + 1:
            col = list_stack[-1][1]
        else:
            if list_stack and out and not out[-1].strip():
                list_stack.clear()
            col = list_stack[-1][1] if list_stack else 0
        text = inline(stripped, doc_pages)
        if text.endswith("::"):
            text = text[:-1] + "\\:"
        out.append(" " * col + text)
        i += 1
    return "\n".join(out) + "\n"


class MarkdownParser(RstParser):
    """docutils parser for ``.md`` sources: convert to reST, then parse that."""

    supported = ("markdown", "md")

    def parse(self, inputstring, document):
        pages = ()
        env = getattr(document.settings, "env", None)
        if env is not None:
            pages = tuple(env.found_docs)
        super().parse(markdown_to_rst(inputstring, pages), document)


def setup(app):
    app.add_source_suffix(".md", "markdown")
    app.add_source_parser(MarkdownParser)
    return {"version": "1", "parallel_read_safe": True, "parallel_write_safe": True}
