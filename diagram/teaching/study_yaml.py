"""Write a Study back as a study file (DESIGN.md §3), so that a teaching case can be redrawn.

Only the file's own keys are written, in the file's order, each only when it has a value.
Numbers are written as plain decimals (the loader refuses YAML 1.1 exponent forms), whole
numbers without a decimal point. ``load_study`` reads the result back to an equal study, apart
from the line numbers and the source name.
"""

from __future__ import annotations

from diagram.reading.plain import study_data
from diagram.reading.study import Study


def study_yaml(study: Study, *, comments: tuple[str, ...] = ()) -> str:
    """Return the study file text; ``comments`` open it as ``#`` lines."""
    import yaml

    def represent_float(dumper: yaml.SafeDumper, value: float) -> yaml.Node:
        text = repr(value)
        if "e" in text or "n" in text:  # exponent, inf, nan: the loader reads none of them
            text = f"{value:.10f}".rstrip("0").rstrip(".")
        return dumper.represent_scalar("tag:yaml.org,2002:float", text)

    class _Dumper(yaml.SafeDumper):
        """A safe dumper writing floats as plain decimals (a subclass: no global change)."""

    _Dumper.add_representer(float, represent_float)
    body = yaml.dump(
        study_data(study),
        Dumper=_Dumper,
        sort_keys=False,
        allow_unicode=True,
        default_flow_style=False,
        width=100,
    )
    head = "".join(f"# {line}\n" for line in comments)
    return head + body
