"""The one-way pipeline: design files -> netlist -> stages -> numbers -> findings -> report.

    kicad.project.load(path) -> Netlist          (find_project(path) gives the project folder)
    config.load_config(project_dir, profile, config_file) -> Config
    parts.PartLibrary.load(project_dir)
    recognise.find_stages(netlist, parts, rails) -> Recognition
    intent per stage (frontcheck.intent)
    analysis.analyse(stage, netlist, rails, options) -> StageResult
    checks.run_rules(ctx) -> [Finding]
    waivers / baseline -> report.model.Report

Nothing flows backwards and nothing here does numerics or knows KiCad syntax. Several projects
run in parallel processes (``jobs``) and come back as one Report.
"""

from __future__ import annotations

import re
import subprocess
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Callable

from . import __version__
from .errors import InputError
from .report.model import ProjectReport, Report

# Words that mark a stage as possibly patient- or mains-connected (matched case-insensitively
# as substrings of references, net names and sheet names, as users spell them in designs).
CAUTION_WORDS = ("ECG", "EMG", "EEG", "electrode", "patient", "mains")
_CAUTION_RE = re.compile("|".join(re.escape(w) for w in CAUTION_WORDS), re.I)
CAUTION_FIELDS = ("Caution",)

_CAUTION_FIELDS_LOWER = frozenset(n.lower() for n in CAUTION_FIELDS)


def _has_caution_field(comp) -> bool:
    """Whether ``comp`` has a field named as one of CAUTION_FIELDS, in any case."""
    return not _CAUTION_FIELDS_LOWER.isdisjoint(map(str.lower, comp.fields))


Progress = Callable[[str, int, int], None]     # (label, done, total)


@dataclass
class RunOptions:
    """What the command line sets for a run."""

    profile: str | None = None
    config_file: str | None = None
    seed: int | None = None
    samples: int | None = None
    fail_on: str = "error"
    baseline: set[str] = field(default_factory=set)
    read_limits: object = None       # kicad.limits.ReadLimits; None: the defaults


# -- small helpers --------------------------------------------------------------------------

def repo_root(directory: str | Path) -> str:
    """The git top level holding ``directory``, else the directory itself (absolute)."""
    d = Path(directory).resolve()
    try:
        out = subprocess.run(["git", "rev-parse", "--show-toplevel"], cwd=d,
                             capture_output=True, text=True, timeout=20)
        if out.returncode == 0 and out.stdout.strip():
            return str(Path(out.stdout.strip()).resolve())
    except (OSError, subprocess.SubprocessError):
        pass
    return str(d)


def _project_location(path: str | Path, limits=None) -> tuple[Path, str]:
    """(project folder, project name) for any accepted path."""
    p = Path(path)
    if p.is_file() and p.suffix.lower() in (".net", ".xml"):
        return p.resolve().parent, p.stem
    from .kicad.project import find_project

    pf = find_project(p, limits)
    name = pf.pro.stem if pf.pro is not None else pf.root.stem
    return Path(pf.dir).resolve(), name


def _load_parts(project_dir: Path | None, config):
    try:
        from .parts import PartLibrary
    except ImportError:
        return None
    loader = getattr(PartLibrary, "load", None)
    if loader is None:
        return None
    try:
        return loader(project_dir, config=config)
    except TypeError:
        return loader(project_dir)


def _apply_intent(stages, netlist, config) -> None:
    try:
        from . import intent as intent_mod
    except ImportError:
        return
    fn = getattr(intent_mod, "apply_intent", None)
    if fn is not None:
        fn(stages, netlist, config)
        return
    one = getattr(intent_mod, "intent_for", None) or getattr(intent_mod, "read_intent", None)
    if one is not None:
        for s in stages:
            s.intent = one(s, netlist, config)


def _unsupported_ref_sources(unsupported, netlist, rails, config) -> None:
    """What drives the REF pin of each in-amp without part data (its Thevenin resistance, from
    the structure alone) and the Min CMRR declared for it, for the ref-impedance rule."""
    import re

    from .analysis.dc_paths import thevenin
    from .component import classify
    from .intent import stage_intent
    # the in-amps' own gain networks load REF; they do not drive it
    gain_parts = {p for un in unsupported for role, expr in un.roles.items()
                  if role.startswith(("RG", "RF")) for p in re.findall(r"[A-Za-z#_]+\d+", expr)}
    for un in unsupported:
        net = un.pins.get("ref")
        if un.kind != "integrated-inamp" or not net or un.ref not in netlist.components:
            continue
        node_refs = {n.ref for x in netlist.nets if x.name == net for n in x.nodes}
        if any(classify(netlist.components[r]) == "connector" for r in node_refs
               if r in netlist.components):
            continue          # REF comes from off the board: its source is not in the design
        th = thevenin(netlist, net, rails, exclude={un.ref} | gain_parts)
        intent = stage_intent(netlist.components[un.ref], config)
        un.schematic["ref_source"] = {"net": net, "ohms": th.ohms, "kind": th.kind,
                                      "driver": th.driver, "parts": list(th.parts),
                                      "min_cmrr_db": intent.min_cmrr_db}


def _unsupported_ref_rail(unsupported, netlist, rails, config) -> None:
    """Each in-amp without part data whose REF is on its negative rail (from the wiring),
    with its declared Input Diff, for the headroom rule."""
    from .analysis.structure import ref_at_low_rail
    from .intent import stage_intent
    for un in unsupported:
        fact = ref_at_low_rail(un, rails)
        if fact is not None and un.ref in netlist.components:
            fact["input_diff"] = stage_intent(netlist.components[un.ref], config).input_diff
            un.schematic["ref_low_rail"] = fact


def _wiring_paths(rec, netlist, rails, parts, dc) -> list:
    """The structural facts that need no part data (frontcheck.analysis.structure): DC paths
    of the inputs and REF of each part without part data, and the amplifier supply pins that
    reach no supply through a DC path."""
    if not rec.amplifiers:
        return []
    from .analysis import structure
    from .analysis.dc_paths import DCView
    try:
        dc = dc or DCView(netlist, rails, parts)
    except InputError:
        return []
    structure.unsupported_paths(dc, rec.unsupported)
    return structure.supply_paths(dc)


def _analysis_options(opts: RunOptions, config):
    from .analysis import Options

    o = Options()
    changes = {}
    if opts.samples is not None:
        # a sample count asked for is a full Monte Carlo of that many circuit solves
        changes["mc_samples"] = int(opts.samples)
        changes["method"] = "monte-carlo"
    if opts.seed is not None:
        changes["seed"] = int(opts.seed)
    return replace(o, **changes) if changes else o


def _stage_nets(stage) -> set[str]:
    c = stage.circuit
    nets = set(c.ports.values())
    for r in c.resistors:
        nets |= {r.a, r.b}
    for cap in c.capacitors:
        nets |= {cap.a, cap.b}
    for op in c.opamps:
        nets |= {op.inp, op.inn, op.out}
    return {n for n in nets if n}


def find_cautions(stages, netlist, project_name: str = "") -> dict[str, list[str]]:
    """Why each stage (and, under '', the design as a whole) may be patient- or mains-connected.

    A stage is marked by its intent notes or a ``Caution`` field on one of its parts, or named
    by a reference, net name or sheet name containing one of CAUTION_WORDS. The design as a
    whole is marked the same way by parts outside any stage, its other net and sheet names and
    the project name, so that a design whose amplifier was not recognised still carries the
    notice.
    """
    out: dict[str, list[str]] = {}
    comps = netlist.components if netlist is not None else {}
    in_stages: set[str] = set()
    stage_nets: set[str] = set()
    stage_sheets: set[str] = set()
    for s in stages:
        why: list[str] = []
        for note in s.intent.notes:
            if _CAUTION_RE.search(note):
                why.append(f"stage intent marks it {note}")
        refs = set(s.references) | {op.ref for op in s.circuit.opamps if not op.internal}
        in_stages |= refs
        named = _CAUTION_RE.search("\n".join(refs)) is not None     # a word in any reference
        for ref in sorted(refs):
            comp = comps.get(ref)
            if comp is not None and _has_caution_field(comp):
                v = comp.field(*CAUTION_FIELDS)
                if v:
                    why.append(f"Caution field on {ref}: {v}")
            if named and _CAUTION_RE.search(ref):
                why.append(f"reference {ref}")
        nets = _stage_nets(s)
        stage_nets |= nets
        if _CAUTION_RE.search("\n".join(nets)):     # most stages: no word in any net name
            for net in sorted(nets):
                if _CAUTION_RE.search(net):
                    why.append(f"net name {net}")
        sheets = sorted({comps[r].sheet_path for r in refs if r in comps
                         and comps[r].sheet_path not in ("", "/")})
        stage_sheets |= set(sheets)
        for sh in sheets:
            if _CAUTION_RE.search(sh):
                why.append(f"sheet {sh}")
        if why:
            out[s.id] = list(dict.fromkeys(why))
    project: list[str] = []
    if project_name and _CAUTION_RE.search(project_name):
        project.append(f"project name {project_name}")
    for ref, comp in sorted(comps.items()):
        if ref in in_stages or not _has_caution_field(comp):
            continue
        v = comp.field(*CAUTION_FIELDS)
        if v:
            project.append(f"Caution field on {ref}: {v}")
    sheets = sorted({c.sheet_path for c in comps.values()} - stage_sheets - {"", "/"})
    project += [f"sheet {sh}" for sh in sheets if _CAUTION_RE.search(sh)]
    nets = [n.name for n in (netlist.nets if netlist is not None else ())
            if n.name not in stage_nets]
    if not _CAUTION_RE.search("\n".join(nets)):       # one search of them all first
        nets = []
    nets = [n for n in nets if _CAUTION_RE.search(n)]
    if nets:
        more = f" and {len(nets) - 5} more" if len(nets) > 5 else ""
        project.append("net names " + ", ".join(nets[:5]) + more)
    if project:
        out[""] = project
    return out


def _near_miss_text(m) -> str:
    return getattr(m, "message", None) or str(m)


def _unsupported_text(u) -> str:
    return getattr(u, "message", None) or str(u)


def expand_paths(paths: list[str]) -> list[str]:
    """A folder that holds no ``.kicad_pro`` itself but has projects below it stands for all of
    them (sorted, hidden folders skipped), so ``frontcheck check boards/`` checks every board.
    Anything else is kept as given (and reported by the loader if it is not a design)."""
    out: list[str] = []
    for p in paths:
        d = Path(p)
        if d.is_dir() and not any(d.glob("*.kicad_pro")):
            found = sorted(x for x in d.rglob("*.kicad_pro")
                           if not any(part.startswith(".") for part in x.relative_to(d).parts))
            if found:
                out += [str(x.parent) if len(list(x.parent.glob("*.kicad_pro"))) == 1 else str(x)
                        for x in found]
                continue
        out.append(p)
    return out


# -- one project ----------------------------------------------------------------------------

try:
    from .analysis import Unanalysable
except ImportError:          # an analysis without per-stage errors: every error ends the run
    class Unanalysable(InputError):   # type: ignore[no-redef]
        stage_id = part = reason = ""

# A stage whose numbers cannot be computed is reported on that stage, as an error: no number
# is given for it, and a design with a stage nobody could check must not pass.
UNANALYSABLE_RULE = "stage-incomplete"


def _unanalysable_finding(stage, e, netlist):
    from .checks.finding import Finding

    ref = ""
    if e.part:
        ref = e.part.split(".")[0]
        comps = netlist.components if netlist is not None else {}
        while ref and ref not in comps and ref[-1].isalpha() and ref[:-1] in comps:
            ref = ref[:-1]      # 'U1A' (an op-amp unit) -> 'U1'
    comp = netlist.components.get(ref) if (netlist is not None and ref) else None
    amp = next((op.ref for op in stage.circuit.opamps if not op.internal), None) or \
        (stage.amplifiers[0] if stage.amplifiers else None)
    anchor = comp or (netlist.components.get(amp) if netlist is not None and amp else None)
    file, line = e.file, e.line
    if file is None and anchor is not None and anchor.location is not None:
        file, line = anchor.location.file, anchor.location.line
    reason = getattr(e, "reason", "")
    detail = f"{e.part} {reason}".strip() if reason else e.message
    return Finding(rule=UNANALYSABLE_RULE, severity="error", stage=stage.id,
                   references=[ref] if comp is not None else list(stage.references),
                   message=f"{stage.kind} stage {stage.id} could not be analysed: "
                           f"{detail}; no numbers are given for it",
                   fix=e.hint or "", file=file, line=line,
                   uuid=(anchor.uuids[0] if anchor is not None and anchor.uuids else None),
                   data={"part": e.part})


def _unknown_stage_tables(stages, netlist, config) -> list:
    """A warning for each ``[stage.<name>]`` table that no stage reads (a typo, or a stage
    that was not recognised), naming the stages that exist: its settings are not used."""
    from .checks.finding import Finding
    from .intent import _amplifier_refs, unused_stage_tables

    unused = unused_stage_tables(stages, netlist, config)
    if not unused:
        return []
    names = [s.id + (f" (amplifier {', '.join(a)})" if (a := [r for r in _amplifier_refs(s, netlist)
                                                           if r != s.id]) else "")
             for s in stages]
    exist = "stages found: " + ", ".join(names) if names else "no stage was found"
    file = str(config.config_path) if config.config_path else "frontcheck.toml"
    return [Finding(rule="design-note", severity="warning",
                    message=f"[stage.{n}] names no stage of this design, so its settings are "
                            f"not used ({exist})",
                    fix="key the table by a stage id or an amplifier reference the report "
                        "lists, or remove it",
                    file=file, line=config.line_of(f"stage.{n}"), data={"table": n})
            for n in unused]


def check_netlist(netlist, project_dir: Path | None, name: str, given: str,
                  opts: RunOptions, progress: Progress | None = None) -> ProjectReport:
    """Run everything after loading on one design's Netlist."""
    from .analysis import analyse_many
    from .checks import Context, run_rules
    from .checks.finding import Finding
    from .config import load_config
    from .netlist_view import one_index
    from .recognise import find_stages
    from .waivers import apply_waivers, check_waivers, fingerprints

    config = load_config(project_dir, opts.profile,
                         Path(opts.config_file) if opts.config_file else None)
    check_waivers(config)
    parts = _load_parts(project_dir, config)
    tol = config.default_tolerance("resistor")
    # recognition and the design's DC view read one index of the netlist (netlist_view)
    with one_index(netlist, parts):
        rec = find_stages(netlist, parts, config.rail_voltage, default_tol=float(tol.value),
                          default_from=tol.detail or tol.source)
        stages = rec.stages
        _apply_intent(stages, netlist, config)

        rails = {}
        for net in netlist.nets:
            v = config.rail_voltage(net.name)
            if v is not None:
                rails[net.name] = v
        options = _analysis_options(opts, config)
        results = {}
        not_analysed: list[Finding] = []
        # The DC picture of the design is the same for every stage: built once, not per stage
        # (per stage it made a check quadratic in the design's size). Should it fail, each stage
        # builds its own and reports the failure on itself, as before.
        dc = None
        if stages:
            from .analysis.dc_paths import DCView
            try:
                dc = DCView(netlist, rails, parts)
            except InputError:
                dc = None
    tick = (lambda k, s: progress(f"{name}: {s.id}", k, len(stages))) if progress else None
    # Stages of one topology family are solved together (frontcheck.analysis.family).
    for s, got in zip(stages, analyse_many(stages, netlist, rails, options, dc=dc, progress=tick)):
        if isinstance(got, Unanalysable):
            not_analysed.append(_unanalysable_finding(s, got, netlist))
        else:
            results[s.id] = got
    if progress:
        progress(f"{name}: rules", len(stages), len(stages))

    _unsupported_ref_sources(rec.unsupported, netlist, rails, config)
    _unsupported_ref_rail(rec.unsupported, netlist, rails, config)
    supplies = _wiring_paths(rec, netlist, rails, parts, dc)
    analysed = [s for s in stages if s.id in results]
    ctx = Context(stages=analysed, results=results, netlist=netlist,
                  near_misses=rec.near_misses, unsupported=rec.unsupported,
                  design_notes=rec.design_notes, rules=config.rules,
                  profile=config.profile, supplies=supplies)
    findings = not_analysed + run_rules(ctx) + _unknown_stage_tables(stages, netlist, config)
    apply_waivers(findings, stages, netlist, config)
    root = repo_root(project_dir) if project_dir is not None else ""
    return ProjectReport(
        name=name, path=given, root=root, profile=config.profile, stages=stages, results=results, findings=findings,
        fingerprints=fingerprints(findings, name, netlist), baselined=set(opts.baseline),
        notes=list(netlist.notes),
        near_misses=[_near_miss_text(m) for m in rec.near_misses],
        unsupported=[_unsupported_text(u) for u in rec.unsupported],
        amplifiers=[{"name": a.name, "ref": a.ref, "kind": a.kind, "stage": a.stage,
                     "reason": a.reason} for a in rec.amplifiers],
        cautions=find_cautions(stages, netlist, name), symbols=len(netlist.components))


def check_project(path: str, opts: RunOptions, progress: Progress | None = None) -> ProjectReport:
    """Load and check one project (folder, .kicad_pro, sheet, .net or .xml).

    Raises InputError when the design cannot be read."""
    from .kicad.project import load

    project_dir, name = _project_location(path, opts.read_limits)
    netlist = load(path, opts.read_limits)
    if not netlist.components:
        # an empty or damaged file (no version, no symbols) must not pass as a clean design
        raise InputError("no symbols in the design: nothing could be checked", file=str(path),
                         hint="give the project's root schematic, saved by KiCad, or a netlist "
                              "KiCad exported from it")
    return check_netlist(netlist, project_dir, name, str(path), opts, progress)


def _error_report(path: str, e: InputError) -> ProjectReport:
    try:
        name = _project_location(path)[1]
    except InputError:
        name = Path(path).name or str(path)
    return ProjectReport(name=name, path=str(path), error=e.render())


def _check_or_error(path: str, opts: RunOptions) -> ProjectReport:
    try:
        return check_project(path, opts)
    except InputError as e:
        return _error_report(path, e)


def tool_info(opts: RunOptions, profile: str | None = None) -> dict:
    """Name, version and the settings that make a run reproducible (the effective Monte
    Carlo seed and sample count, not just what the command line said)."""
    from .analysis import Options

    d = Options()
    return {"name": "frontcheck", "version": __version__,
            "profile": opts.profile or profile or "default",
            "seed": d.seed if opts.seed is None else opts.seed,
            "samples": d.mc_samples if opts.samples is None else opts.samples}


def run(paths: list[str], opts: RunOptions, jobs: int = 1,
        progress: Progress | None = None) -> Report:
    """Check every path; one Report. A path that cannot be read becomes a ProjectReport with
    ``error`` set (exit status 2), and the others are still checked."""
    report = Report(tool=tool_info(opts), fail_on=opts.fail_on)
    if jobs > 1 and len(paths) > 1:
        # imported here: multiprocessing costs a small check's start-up some 10 ms
        from concurrent.futures import ProcessPoolExecutor

        with ProcessPoolExecutor(max_workers=min(jobs, len(paths))) as ex:
            futures = [ex.submit(_check_or_error, p, opts) for p in paths]
            for k, fut in enumerate(futures):
                report.projects.append(fut.result())
                if progress:
                    progress(paths[k], k + 1, len(paths))
    else:
        for k, p in enumerate(paths):
            if len(paths) == 1:
                try:
                    report.projects.append(check_project(p, opts, progress))
                except InputError as e:
                    report.projects.append(_error_report(p, e))
            else:
                report.projects.append(_check_or_error(p, opts))
                if progress:
                    progress(p, k + 1, len(paths))
    # the profile actually used: a project file may name one when the command line does not
    profiles = {p.profile for p in report.projects if not p.error}
    if opts.profile is None and len(profiles) == 1:
        report.tool["profile"] = profiles.pop()
    return report
