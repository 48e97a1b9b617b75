"""Field-wide survey: one TOML description in, tables, figures, a JSON summary and an HTML report out."""

from .api import MethodEstimate, ParseContext, ReportPart, RunContext, SectionEstimate, SurveyMethod, SurveySection  # noqa: F401
