"""``.. hrstage-example:: script.py`` — run an example script at build time and show its figures.

The script (in the ``examples/`` folder of the source tree, option ``hrstage_examples_dir``) is run
in a fresh namespace. Every matplotlib Figure it leaves in a module-level name (a Figure, or an
Axes whose figure is taken) is saved as a PNG under ``docs/_generated/`` and shown, followed by
the script's source. A script that raises, or draws nothing, fails the build.
"""

from __future__ import annotations

import runpy
from pathlib import Path

from docutils import nodes
from sphinx.util.docutils import SphinxDirective

__all__ = ["ExampleDirective", "setup"]


def _figures(namespace):
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

    seen = []
    for value in namespace.values():
        fig = value.figure if isinstance(value, Axes) else value if isinstance(value, Figure) else None
        if fig is not None and hasattr(fig, "savefig") and all(fig is not f for f in seen):
            seen.append(fig)
    return seen


class ExampleDirective(SphinxDirective):
    required_arguments = 1
    has_content = False

    def run(self):
        name = self.arguments[0]
        folder = Path(self.env.srcdir) / self.config.hrstage_examples_dir
        script = (folder / name).resolve()
        if not script.is_file():
            raise self.error(f"example script {name} not found in {self.config.hrstage_examples_dir}")
        self.env.note_dependency(str(script))
        try:
            namespace = runpy.run_path(str(script), run_name="__hrstage_example__")
        except Exception as exc:
            raise self.error(f"example {name} failed: {type(exc).__name__}: {exc}") from exc
        figures = _figures(namespace)
        if not figures:
            raise self.error(f"example {name} drew no figure (leave a Figure or an Axes in a module-level name)")
        out_dir = Path(self.env.srcdir) / "_generated"
        out_dir.mkdir(exist_ok=True)
        result = []
        for k, fig in enumerate(figures):
            png = out_dir / f"{script.stem}_{k}.png"
            fig.savefig(png, dpi=self.config.hrstage_examples_dpi)
            result.append(nodes.image(uri=f"/_generated/{png.name}", alt=f"figure drawn by {name}",
                                      classes=["hrstage-example"]))
        code = script.read_text(encoding="utf-8")
        block = nodes.literal_block(code, code, language="python")
        result.append(nodes.paragraph(text=f"Source: examples/{name}"))
        result.append(block)
        return result


def setup(app):
    app.add_config_value("hrstage_examples_dir", "../examples", "env")
    app.add_config_value("hrstage_examples_dpi", 90, "env")
    app.add_directive("hrstage-example", ExampleDirective)
    return {"version": "1", "parallel_read_safe": True, "parallel_write_safe": True}
