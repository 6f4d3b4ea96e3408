"""`frontcheck rules` lists the rules; `frontcheck explain RULE` prints one rule's documentation
with the policy (severities and thresholds) a profile gives it."""

from __future__ import annotations

import json
import re
import shutil
import sys
import textwrap

from ..errors import InputError


def add_parser(sub) -> None:
    p = sub.add_parser("rules", help="list the rules and their severities under a profile",
                       description="List every rule with its severities under a profile.")
    p.add_argument("--profile", default="default",
                   help="profile name (default, strict) or path to a profile .toml (default: default)")
    p.add_argument("--format", choices=("text", "json"), default="text")
    p.set_defaults(run=run_rules)

    e = sub.add_parser("explain", help="explain one rule: what, why, how to fix, source",
                       description="Print one rule's documentation and its settings under a profile.")
    e.add_argument("rule", metavar="RULE", help="rule id, e.g. ratio-mismatch")
    e.add_argument("--profile", default="default",
                   help="profile name (default, strict) or path to a profile .toml (default: default)")
    e.set_defaults(run=run_explain)


def _policy(profile: str) -> dict[str, dict]:
    """Every rule's settings under ``profile``: declared defaults <- default <- ``profile``."""
    from ..checks import load_profile, policy_of, rule_ids

    chosen = load_profile(profile)
    return {rid: policy_of(rid, chosen.get(rid)) for rid in rule_ids()}


def _width() -> int:
    """Columns to wrap at: the terminal's (``COLUMNS`` when piped), 60 to 100."""
    return max(60, min(100, shutil.get_terminal_size((100, 24)).columns))


def _plain(text: str) -> str:
    """A docstring paragraph as plain text: reST literals and emphasis marks removed."""
    return re.sub(r"(?<![\w*])\*([^*\s][^*]*?)\*(?![\w*])", r"\1", text.replace("``", ""))


def _example(doc: str, width: int) -> list[str]:
    """The Example section: its sentences wrapped to ``width``, its circuit lines (indented
    deeper) kept as written."""
    lines = doc.splitlines()
    out: list[str] = []
    prose: list[str] = []

    def flush():
        if prose:
            out.extend(textwrap.wrap(" ".join(prose), width, initial_indent="    ",
                                     subsequent_indent="    ", break_on_hyphens=False))
            prose.clear()

    for line in lines[lines.index("Example") + 1:]:
        if line and not line[0].isspace():
            break
        if line.startswith("     "):
            flush()
            out.append(_plain(line.rstrip()))
        elif line.strip():
            prose.append(_plain(line.strip()))
    flush()
    return out


def render_doc(doc: str, width: int) -> str:
    """A rule docstring as plain text wrapped to ``width``: the first line, then each section
    heading with its paragraph indented by four spaces."""
    from ..checks import doc_sections

    out = []
    for head, body in doc_sections(doc).items():
        body = _plain(body)
        if head == "Example":        # a circuit, one part per line: kept as written
            out += ["", head, *_example(doc, width)]
            continue
        if not head:
            out.append(textwrap.fill(body, width))
            continue
        out.append("")
        out.append(head)
        out.append(textwrap.fill(body, width, initial_indent="    ", subsequent_indent="    ",
                                 break_on_hyphens=False))
    return "\n".join(out)


def run_rules(args) -> int:
    from ..checks import rules

    table = _policy(args.profile)
    infos = rules()
    if args.format == "json":
        json.dump({"profile": args.profile,
                   "rules": [{"id": r.id, "summary": r.summary, "settings": table.get(r.id, {})}
                             for r in infos]}, sys.stdout, indent=2)
        print()
        return 0
    width = max(len(r.id) for r in infos)
    hang = " " * (width + 13)          # continuation lines under the summary column
    print(f"Rules (profile: {args.profile})")
    for r in infos:
        pol = table.get(r.id, {})
        sev = pol.get("severity", "?")
        print(textwrap.fill(f"  {r.id:<{width}}  {sev:<7}  {r.summary}", _width(),
                            subsequent_indent=hang, break_on_hyphens=False))
        others = {k: v for k, v in pol.items() if k.endswith("_severity")}
        if others:
            print(textwrap.fill(hang + "also: " + ", ".join(f"{k}={v}" for k, v in others.items()),
                                _width(), subsequent_indent=hang, break_on_hyphens=False))
    print("\n`frontcheck explain RULE` describes a rule and its settings.")
    return 0


def run_explain(args) -> int:
    from ..checks import rules

    infos = {r.id: r for r in rules()}
    r = infos.get(args.rule)
    if r is None:
        close = [i for i in infos if args.rule.lower() in i or i in args.rule.lower()]
        raise InputError(f"unknown rule {args.rule!r}",
                         hint=(f"did you mean {', '.join(close)}? " if close else "")
                         + f"known rules: {', '.join(infos)}")
    pol = _policy(args.profile).get(r.id, {})
    width = _width()
    print(render_doc(r.doc, width))
    print()
    print(textwrap.fill(f"Settings (profile {args.profile}; override any of them under "
                        f"[rules.{r.id}] in frontcheck.toml):", width))
    for key, param in r.parameters.items():
        value = json.dumps(pol[key]) if key in pol else "unset"
        print(f"  {key} = {value}")
        print(textwrap.fill(f"{param.meaning} ({param.type_text()})", width,
                            initial_indent="      ", subsequent_indent="      "))
    return 0
