"""The `edgefit` command: fit, batch, demo, token (and `serve`, registered by edgefit_web)."""
from __future__ import annotations

import argparse
import json
import os
import sys
from importlib.metadata import entry_points
from pathlib import Path

from . import __version__
from .analysis import READER_OPTIONS, options_from_mapping
from .errors import EdgefitError

CAUTION = ("A Tauc gap is a model-dependent estimate: check the fitted window in the report. "
           "Thickness errors scale α, not the gap.")


# --------------------------------------------------------------------------- options

def _add_fit_options(p):
    g = p.add_argument_group("reading")
    g.add_argument("--quantity", help="transmittance, reflectance, absorbance, "
                   "absorption-coefficient or diffuse-reflectance (detected from headers if omitted)")
    g.add_argument("--x-unit", dest="x_unit", help="nm, um, ev or cm-1 (detected if omitted)")
    g.add_argument("--y-unit", dest="y_unit", choices=["fraction", "percent"],
                   help="T or R as a fraction or in percent (detected if omitted)")
    g.add_argument("--column", help="quantity column to use (header name or 1-based number)")
    g = p.add_argument_group("film")
    g.add_argument("--thickness", help="film thickness with its unit, e.g. 400nm or 0.4um")
    s = g.add_mutually_exclusive_group()
    s.add_argument("--substrate-index", dest="substrate_index",
                   help="refractive index of a transparent substrate, e.g. 1.52")
    s.add_argument("--substrate", metavar="FILE", help="transmittance of the bare substrate")
    g.add_argument("--reflectance", metavar="FILE",
                   help="reflectance measured on the same spot (α from T and R)")
    g.add_argument("--tr-method", dest="tr_method",
                   choices=["auto", "total", "exact", "simple", "hishikawa"],
                   help="how T and R give α (default auto: hishikawa for a film on a substrate, "
                        "total (measured R of a free-standing slab) otherwise)")
    g = p.add_argument_group("edge")
    g.add_argument("--model", choices=["auto", "direct", "indirect", "both"],
                   help="impose the transition (default auto: decided from the evidence)")
    g.add_argument("--window", metavar="LO:HI", help="manual Tauc window in eV, e.g. 1.60:1.85")
    g.add_argument("--urbach-window", dest="urbach_window", metavar="LO:HI",
                   help="manual Urbach window in eV")
    g.add_argument("--range", metavar="LO:HI", help="analyse only this energy range in eV, "
                   "e.g. 1.0:2.5 (default: every trusted point)")
    g.add_argument("--bootstrap", help="bootstrap resamples per window (default 200)")
    g.add_argument("--fringes", choices=["auto", "off"], help="interference-fringe analysis")


def _pop_reader(opts: dict) -> dict:
    """Take the reader's options (quantity, units, column) out of checked options."""
    return {k: opts.pop(k) for k in READER_OPTIONS if k in opts}


def _split_options(args):
    """CLI namespace → (reader options, analysis options, reflectance path, substrate path)."""
    raw = {k: getattr(args, k, None) for k in
           ("quantity", "x_unit", "y_unit", "column", "thickness", "substrate_index", "tr_method", "model",
            "window", "urbach_window", "range", "bootstrap", "fringes")}
    opts = options_from_mapping({k: v for k, v in raw.items() if v is not None})
    reader = _pop_reader(opts)
    for f in (args.reflectance, args.substrate):
        if f and not Path(f).is_file():
            raise EdgefitError(f"no such file: {f}", code="bad-file", fix="check the path")
    return reader, opts, args.reflectance, args.substrate


# --------------------------------------------------------------------------- output

def _fmt_err(v, scale=1.0, digits=3):
    return "?" if v is None else f"{v * scale:.{digits}f}"


def format_result(r: dict) -> str:
    """A readable block for one result dict."""
    head = r["source"] + (f" [{r['column']}]" if r.get("column") else "")
    if r.get("sample") and r["sample"] not in head:
        head += f"  sample {r['sample']}"
    strength = (r.get("verdict") or {}).get("strength")
    lines = [head, f"  transition     {r['transition']}"
                   + (f", {strength} evidence" if strength else "")
                   + (f"  ({r['verdict'].get('reason')})" if r.get("verdict") else "")]
    for g in r["gaps"]:
        lo, hi = g["window_ev"]
        tag = " (candidate)" if g.get("candidate") else ""
        lines.append(f"  {g['kind']:<9} gap  {g['eg_ev']:.3f} ± {_fmt_err(g.get('eg_err_ev'))} eV"
                     f"   window {lo:.3f}–{hi:.3f} eV   {g['method']}{tag}")
    u = r.get("urbach")
    if u:
        lo, hi = u["window_ev"]
        lines.append(f"  Urbach energy  {u['eu_mev']:.1f} ± {_fmt_err(u.get('eu_err_mev'), 1, 1)}"
                     f" meV   window {lo:.3f}–{hi:.3f} eV")
    else:
        lines.append("  Urbach energy  not found")
    f = r.get("film")
    if f and f.get("thickness_nm"):
        err = f.get("thickness_err_nm")
        lines.append(f"  thickness      {f['thickness_nm']:.0f}"
                     + (f" ± {err:.1f}" if err else "") + f" nm ({f.get('thickness_source')})")
        if f.get("n"):
            lines.append("  refractive n   " + ", ".join(f"{k}: {v:.3f}" for k, v in f["n"].items()
                                                         if v is not None))
    if r.get("e04_ev"):
        lines.append(f"  E04            {r['e04_ev']:.3f} eV (α = 10⁴ cm⁻¹)")
    for fl in r["flags"]:
        lines.append(f"  ! {fl['code']}: {fl['message']}")
    return "\n".join(lines)


def _write_reports(results: list, path: str):
    from . import report
    p = Path(path)
    if len(results) == 1 and p.suffix.lower() in (".html", ".htm"):
        report.write_report(results[0], p)
        return [str(p)]
    p.mkdir(parents=True, exist_ok=True)
    out = []
    for i, r in enumerate(results):
        stem = Path(r["source"]).stem + (f"_{i + 1}" if len(results) > 1 else "")
        target = p / f"{stem}.html"
        report.write_report(r, target)
        out.append(str(target))
    return out


# --------------------------------------------------------------------------- commands

def cmd_fit(args) -> int:
    from .batch import fit_path
    reader, opts, refl, subs = _split_options(args)
    results = []
    for f in args.files:
        if not Path(f).is_file():
            raise EdgefitError(f"no such file: {f}", code="bad-file", fix="check the path")
        results += fit_path(f, reader, opts, refl, subs)
    if args.report:
        paths = _write_reports(results, args.report)
        print("report" + ("s" if len(paths) > 1 else "") + ": " + ", ".join(paths),
              file=sys.stderr)
    if args.json:
        clean = [{k: v for k, v in r.items() if k != "data"} for r in results]
        json.dump({"version": __version__, "results": clean}, sys.stdout, ensure_ascii=False)
        sys.stdout.write("\n")
    else:
        print("\n\n".join(format_result(r) for r in results))
        print(f"\n{CAUTION}")
    return 0


def _progress_bar(total, desc):
    from tqdm import tqdm
    bar = tqdm(total=total, desc=desc, unit="file", file=sys.stderr,
               disable=not sys.stderr.isatty() and os.environ.get("EDGEFIT_PROGRESS") != "1")

    def update(done, _total):
        bar.n = done
        bar.refresh()
    return bar, update


def _batch(files, out, reader, opts, refl, subs, trend_key=None):
    from . import report
    from .batch import run_batch
    bar, update = _progress_bar(len(files), "fitting")
    try:
        items = run_batch(files, reader=reader, options=opts, reflectance=refl, substrate=subs,
                          progress=update)
    finally:
        bar.close()
    results = [r for it in items for r in it.results]
    errors = [it for it in items if it.error]
    Path(out).mkdir(parents=True, exist_ok=True)
    failed = [{"source": Path(it.path).name, "message": it.error} for it in errors]
    paths = report.write_batch(results, out, trend_key=trend_key, errors=failed) \
        if results else {}
    (Path(out) / "results.json").write_text(json.dumps(
        {"version": __version__, "results": [{k: v for k, v in r.items() if k != "data"}
                                             for r in results],
         "errors": [{"source": Path(it.path).name, "message": it.error} for it in errors]},
        ensure_ascii=False, indent=1), encoding="utf-8")
    return items, results, errors, paths


def cmd_batch(args) -> int:
    from .batch import collect_files
    reader, opts, refl, subs = _split_options(args)
    files = collect_files(args.inputs)
    items, results, errors, paths = _batch(files, args.out, reader, opts, refl, subs,
                                           args.trend)
    for r in results:
        gaps = ", ".join(f"{g['kind']} {g['eg_ev']:.3f}±{_fmt_err(g.get('eg_err_ev'))}"
                         for g in r["gaps"]) or "no gap"
        eu = f"Eu {r['urbach']['eu_mev']:.0f} meV" if r.get("urbach") else "Eu —"
        print(f"{r['source']:<32} {r['transition']:<16} {gaps:<40} {eu}")
    for it in errors:
        print(f"FAILED {it.error}", file=sys.stderr)
    print(f"\n{len(results)} spectra fitted, {len(errors)} files failed; summary: "
          f"{paths.get('summary_html', '-')}, table: {paths.get('summary_csv', '-')}")
    print(CAUTION)
    return 1 if errors and not results else 0


def demo_dir() -> Path:
    """spectra_demo/ beside the package (source checkout or editable install), or ./spectra_demo."""
    for cand in (Path(__file__).resolve().parent.parent / "spectra_demo",
                 Path.cwd() / "spectra_demo"):
        if cand.is_dir() and any(cand.glob("manifest*.json")):
            return cand
    raise EdgefitError("the demo files (spectra_demo/ with manifest*.json) were not found",
                       fix="run from a checkout of edgefit, or pass --dir", code="bad-file")


def cmd_demo(args) -> int:
    from . import report
    from .batch import fit_path
    d = Path(args.dir) if args.dir else demo_dir()
    entries = []
    for m in sorted(d.glob("manifest*.json")):
        entries += json.loads(m.read_text(encoding="utf-8"))
    if not entries:
        raise EdgefitError(f"no demo entries in {d}/manifest*.json", code="bad-file")
    references = [e for e in entries if e.get("role")]     # e.g. a bare substrate: not fitted
    entries = [e for e in entries if not e.get("role")]
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    results, rows = [], []
    bar, update = _progress_bar(len(entries), "demo")
    try:
        for k, ent in enumerate(entries, 1):
            o = dict(ent.get("options", {}))
            refl = o.pop("reflectance", None)
            subs = o.pop("substrate", None)
            opts = options_from_mapping(o)
            reader = _pop_reader(opts)
            res = fit_path(str(d / ent["file"]), reader, opts,
                           str(d / refl) if refl else None, str(d / subs) if subs else None)
            for r in res:
                r.setdefault("metadata", {}).update(ent.get("metadata", {}))
                results.append(r)
                rows.append((ent, r))
            update(k, len(entries))
    finally:
        bar.close()
    paths = report.write_batch(results, out, trend_key=args.trend)
    print(f"{'file':<34} {'verdict':<16} {'gaps [eV]':<34} {'Eu [meV]':<10} truth")
    for ent, r in rows:
        gaps = ", ".join(f"{g['kind'][:3]} {g['eg_ev']:.3f}±{_fmt_err(g.get('eg_err_ev'))}"
                         for g in r["gaps"])
        eu = f"{r['urbach']['eu_mev']:.1f}" if r.get("urbach") else "—"
        truth = ", ".join(f"{k}={v}" for k, v in ent.get("truth", {}).items())
        print(f"{ent['file']:<34} {r['transition']:<16} {gaps:<34} {eu:<10} {truth}")
    for ent in references:
        print(f"{ent['file']:<34} ({ent['role']}: used by the others, not fitted)")
    print(f"\nreports: {out.resolve()}/ (open {paths.get('summary_html')})")
    print(CAUTION)
    return 0


def cmd_token(args) -> int:
    from . import archive
    data_dir = args.data_dir or archive.default_data_dir()
    if args.token_cmd == "create":
        token = archive.create_token(data_dir, args.name, args.kind)
        print(f"new {args.kind} API token for '{args.name}' (shown once; only its hash is "
              f"stored): {token}")
    elif args.token_cmd == "list":
        for t in archive.list_tokens(data_dir):
            by = f" by token {t['created_by']}" if t.get("created_by") else ""
            print(f"{t['id']:>4}  {t['name']:<24} {t['kind']:<9} created {t['created']}{by}"
                  + ("  REVOKED" if t.get("revoked") else ""))
    else:
        if not archive.revoke_token(data_dir, args.name):
            raise EdgefitError(f"no active token named or numbered {args.name!r}",
                               fix="see `edgefit token list`", code="not-found")
        print(f"revoked {args.name}")
    return 0


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="edgefit", description="Optical band gaps, transition type "
                                "and Urbach energy from UV-Vis-NIR spectra.")
    p.add_argument("--version", action="version", version=f"edgefit {__version__}")
    sub = p.add_subparsers(dest="command", required=True)

    f = sub.add_parser("fit", help="fit one or more spectrum files")
    f.add_argument("files", nargs="+", metavar="FILE")
    _add_fit_options(f)
    f.add_argument("--json", action="store_true", help="print one JSON object on stdout")
    f.add_argument("--report", metavar="PATH", help="write the interactive report (an .html "
                   "file, or a directory for several spectra)")
    f.set_defaults(func=cmd_fit)

    b = sub.add_parser("batch", help="fit many files; reports, summary.html and summary.csv")
    b.add_argument("inputs", nargs="+", metavar="DIR|FILE")
    b.add_argument("--out", required=True, metavar="DIR")
    b.add_argument("--trend", metavar="KEY", help="metadata key for the trend plot")
    _add_fit_options(b)
    b.set_defaults(func=cmd_batch)

    d = sub.add_parser("demo", help="fit the invented demo scenario end to end")
    d.add_argument("--out", default="edgefit-demo-out", metavar="DIR")
    d.add_argument("--dir", help="demo folder (default: spectra_demo/ of the checkout)")
    d.add_argument("--trend", default=None, metavar="KEY")
    d.set_defaults(func=cmd_demo)

    t = sub.add_parser("token", help="API tokens of the service")
    tsub = t.add_subparsers(dest="token_cmd", required=True)
    tc = tsub.add_parser("create", help="print a new token (once)")
    tc.add_argument("--name", required=True, help="the person or instrument it belongs to")
    tc.add_argument("--kind", choices=["admin", "normal", "read-only"], default="normal",
                    help="admin: also creates and revokes tokens over REST; normal: reads and "
                         "writes; read-only: reads only (default normal)")
    tl = tsub.add_parser("list", help="list tokens (names, never the tokens)")
    tr = tsub.add_parser("revoke", help="revoke a token by name or id")
    tr.add_argument("name", metavar="NAME|ID")
    for x in (tc, tl, tr):
        x.add_argument("--data-dir", dest="data_dir")
    t.set_defaults(func=cmd_token)

    # subcommands of installed companions (edgefit_web registers `serve`)
    for ep in entry_points(group="edgefit.commands"):
        try:
            ep.load()(sub)
        except Exception as exc:  # a broken plugin must not break the core command
            print(f"edgefit: could not load command {ep.name!r}: {exc}", file=sys.stderr)
    return p


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args) or 0)
    except EdgefitError as exc:
        print(f"edgefit: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("edgefit: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:     # output piped into `head` and the like
        return 0
