"""Field-wide survey: one TOML description in, tables, figures, a JSON summary and an HTML report out."""

from .api import (MethodEstimate, ParseContext, RunContext, SectionEstimate, SurveyMethod,  # noqa: F401
                  SurveySection)
