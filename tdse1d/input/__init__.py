"""The input of a run: the key machinery, the --set overrides and the TOML reader
(:mod:`~tdse1d.input.spec`), the sections of an input file (:mod:`~tdse1d.input.schema`)
and the assembly of a run from them (:mod:`~tdse1d.input.problem`).
"""
