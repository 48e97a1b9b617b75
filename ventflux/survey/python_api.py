"""A survey file from Python: ``Survey.from_file(path)``, ``.check()``, ``.run()``.

The same steps as ``ventflux survey`` (one path: the file is validated by
``load_survey`` exactly as ``--check`` does, and run by ``run_survey``), for
scripts and notebooks::

    import ventflux as vf

    survey = vf.Survey.from_file("survey.toml")   # every problem of the file at once, or a Survey
    survey.check()                               # what --check reports: vents, sections, files, warnings
    result = survey.run(draws=2000)              # a SurveyResult: repr, to_dataframe(), to_xarray()
    survey.run(out="results")                    # also the results folder (tables, figures, report, results.nc)
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from ..errors import InputError


@dataclass(frozen=True)
class SurveyCheck:
    """What validating a survey file found (the content of ``ventflux survey --check``)."""

    path: Path
    vents: list
    sections: list
    input_files: list
    warnings: list

    def __repr__(self) -> str:
        lines = [f"{self.path.name}: valid ({len(self.vents)} vents, sections: {', '.join(self.sections) or 'none'}, "
                 f"{len(self.input_files)} input files)"]
        lines += [f"  warning: {w}" for w in self.warnings]
        return "\n".join(lines)


class Survey:
    """A validated survey file, ready to run.

    Parameters
    ----------
    spec : SurveySpec
        The parsed survey (``ventflux.survey.spec.load_survey``); use ``from_file``.
    """

    def __init__(self, spec):
        self.spec = spec

    @classmethod
    def from_file(cls, path) -> Survey:
        """Read and validate a survey file (TOML); raise ``InputErrors`` naming every problem.

        Parameters
        ----------
        path : path-like
            The survey file; relative paths inside it are relative to its folder.
        """
        from .spec import load_survey

        return cls(load_survey(path))

    @property
    def path(self) -> Path:
        return self.spec.path

    @property
    def vents(self) -> list:
        """Names of the focused vents."""
        return [v.name for v in self.spec.vents]

    @property
    def sections(self) -> list:
        """Keys of the field-wide sections (``diffuse``, ...)."""
        return list(self.spec.sections)

    def check(self) -> SurveyCheck:
        """Validate the file again as it is now on disk (and its data files), as ``--check`` does.

        Returns
        -------
        SurveyCheck
            Vents, sections, input files and warnings; problems raise ``InputErrors``.
        """
        from .spec import load_survey

        spec = load_survey(self.spec.path)
        return SurveyCheck(spec.path, [v.name for v in spec.vents], list(spec.sections), list(spec.input_files),
                           spec.warnings.lines())

    def run(self, draws: int | None = None, seed: int | None = None, out=None, progress=None):
        """Compute everything the survey asks for.

        Parameters
        ----------
        draws : int, optional
            Monte Carlo draws (at least 100); default the file's ``[run] draws``.
        seed : int, optional
            Random seed; default the file's ``[run] seed``.
        out : path-like, optional
            Also write the results folder there (tables, figures, report,
            ``results.nc``), as ``ventflux survey --out`` does.
        progress : callable, optional
            Called with a line of text at each step.

        Returns
        -------
        SurveyResult
        """
        from .run import run_survey

        spec = self.spec
        changes: dict = {}
        if draws is not None:
            if not isinstance(draws, int) or draws < 100:
                raise InputError("draws", draws, "at least 100 draws for a survey")
            from ..resources import check_memory
            from .spec import _series

            check_memory(draws, _series(spec.vents, spec.sections), "draws")
            changes["draws"] = draws
        if seed is not None:
            changes["seed"] = int(seed)
        if changes:
            # read again with the run's own draws and seed: what reading reduces with a Monte Carlo (the probe
            # records) then refuses exactly what the run would, as on the command line
            from .spec import load_survey

            spec = load_survey(spec.path, draws=changes.get("draws"), seed=changes.get("seed"),
                               max_unphysical=spec.max_unphysical)
        result = run_survey(spec, progress=progress or (lambda msg: None))
        if out is not None:
            from .report import write_results

            write_results(result, Path(out))
        return result

    def __repr__(self) -> str:
        s = self.spec
        return (f"Survey({s.path.name}: site {s.site.name!r}, vents {', '.join(self.vents) or 'none'}; "
                f"sections {', '.join(self.sections) or 'none'}; {s.draws} draws, seed {s.seed})")
