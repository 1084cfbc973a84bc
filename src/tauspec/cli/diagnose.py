"""The ``tauspec diagnose FILE...`` command: does the unentangled bead-spring (Rouse) description hold."""

from __future__ import annotations

import argparse

from ..analysis.diagnosis.options import DiagnoseOptions
from .common import add_output_arguments, check_output_arguments, figure_formats, output_dir_for, run_each_file
from .options import add_options, options_from_args

__all__ = ["add_arguments", "run"]


def add_arguments(p: argparse.ArgumentParser) -> None:
    """Register the options of ``diagnose``."""
    p.add_argument("files", nargs="+", metavar="FILE", help="sweep files (text tables with a header row)")
    add_output_arguments(p, out_help="write diagnosis.json and diagnosis.txt into DIR (DIR/<file stem>/ for "
                                     "several files)")
    add_options(p.add_argument_group("diagnosis"), DiagnoseOptions)


def run(args: argparse.Namespace) -> int:
    """Diagnose every file; print JSON lines or a text report; return 1 when any file failed."""
    from ..analysis.diagnosis.diagnose import diagnose
    from ..data.read import read_sweep
    from ..data.write import atomic_write_text, dumps_json

    check_output_arguments(args)
    options = options_from_args(args, DiagnoseOptions)
    formats = figure_formats(args)

    def work(path: str) -> tuple[dict, str, list[str]]:
        from .text import diagnosis_text

        sweep = read_sweep(path)
        diag = diagnose(sweep, options)
        result = diag.to_dict()
        text, caveats = diagnosis_text(result)
        out = output_dir_for(args, path)
        if out is not None:
            out.mkdir(parents=True, exist_ok=True)
            atomic_write_text(out / "diagnosis.json", dumps_json(result, indent=1) + "\n")
            atomic_write_text(out / "diagnosis.txt", diag.report() + "\n")
            if args.plot:
                from ..output.figures.diagnosis import plot_diagnosis
                from ..output.figures.style import save_figure

                save_figure(plot_diagnosis(diag), out / "diagnosis", formats)
            text += f"\nwrote {out}/ (diagnosis.json, diagnosis.txt" + (", diagnosis figure" if args.plot else "") \
                + ")"
        return result, text, caveats

    return run_each_file(args, work)
