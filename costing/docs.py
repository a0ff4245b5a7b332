"""The README's column reference, generated from the contract so the two never disagree.
`python -m costing.docs` prints it; a test checks the README holds the current text."""

from __future__ import annotations

from costing.contract.inputs import SETTINGS, SHEETS


def column_reference() -> str:
    """The README's column reference (Markdown), generated from the input contract."""
    lines: list[str] = []
    for spec in SHEETS:
        lines.append(f"**{spec.name}** ({'required' if spec.required else 'optional'} sheet): {spec.note}")
        lines.append("")
        if spec.name == "Settings":
            lines.append("| setting | default | meaning |")
            lines.append("|---|---|---|")
            for s in SETTINGS:
                default = "(blank)" if s.default is None else str(s.default)
                lines.append(f"| `{s.name}` | {default} | {s.note} |")
        else:
            lines.append("| column | required | unit | meaning |")
            lines.append("|---|---|---|---|")
            for c in spec.columns:
                req = "yes" if c.required else ""
                if c.allow_blank:
                    req = "header yes; cell may be blank"
                note = c.note + (" Allowed: " + ", ".join(c.choices) + "." if c.choices else "")
                lines.append(f"| `{c.name}` | {req} | {c.unit} | {note} |")
        lines.append("")
    return "\n".join(lines).rstrip() + "\n"


if __name__ == "__main__":  # pragma: no cover
    print(column_reference(), end="")
