import os

import matplotlib

# Every survey read in the tests (in this process and in the commands they start) is checked against the survey
# schema: a parser that reads a key its table does not declare raises (ventflux.survey.schema.strict_schema).
os.environ.setdefault("VENTFLUX_STRICT_SCHEMA", "1")

matplotlib.use("Agg")
