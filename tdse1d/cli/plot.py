"""``tdse1d plot RESULT.h5 [--what ...] [-o FILE]``: figures of a result file.

With ``--what all`` (or without ``-o``) every figure goes to its own file,
``STEM-WHAT.EXT`` beside ``-o`` (default: beside the result file, PNG). The figures
and their choice by kind of file are :func:`tdse1d.api.plot`'s; this module only
parses and prints the files written.
"""

from __future__ import annotations

HELP = "draw the figures of a result file (field, density, spectra, time-frequency map, populations)"


def add_arguments(parser):
    from ..api.figures import all_figures

    parser.add_argument("result", metavar="RESULT.h5", help="result file")
    parser.add_argument("--what", default="all", choices=[*all_figures(), "all"],
                        help="which figure (default: all, one file each)")
    parser.add_argument("-o", "--output", metavar="FILE", default=None,
                        help="output file (.png, .pdf or .svg); with --what all, a stem for one file per figure")
    parser.add_argument("--beside", metavar="SUMMARY.h5", nargs="+", default=(),
                        help="scan summaries whose cutoffs the cutoff-ladder figure of a summary draws too "
                             "(e.g. the SFA scan of the same plan in another directory)")


def main(args):
    from ..api.figures import plot

    plot(args.result, args.what, args.output, on_written=lambda path: print(f"wrote {path}"), beside=args.beside)
    return 0
