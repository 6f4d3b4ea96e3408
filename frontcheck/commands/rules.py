"""`frontcheck rules` lists the rules; `frontcheck explain RULE` prints one rule's documentation
with the policy (severities and thresholds) a profile gives it."""

from __future__ import annotations

import json
import sys

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
    from ..checks import load_profile, merge_rules

    base = load_profile("default")
    return base if profile == "default" else merge_rules(base, load_profile(profile))


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
    print(f"Rules (profile: {args.profile})")
    for r in infos:
        pol = table.get(r.id, {})
        sev = pol.get("severity", "?")
        print(f"  {r.id:<{width}}  {sev:<7}  {r.summary}")
        others = {k: v for k, v in pol.items() if k.endswith("_severity")}
        if others:
            print(f"  {'':<{width}}  {'':<7}  also: " + ", ".join(f"{k}={v}" for k, v in others.items()))
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
    print(r.doc)
    print(f"\nSettings (profile: {args.profile}; override under [rules.{r.id}] in frontcheck.toml):")
    for key, meaning in r.parameters.items():
        value = pol.get(key, "(unset)")
        print(f"  {key} = {json.dumps(value) if value != '(unset)' else value}")
        print(f"      {meaning}")
    return 0
