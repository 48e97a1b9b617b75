import os

import matplotlib

# Every survey read in the tests (in this process and in the commands they start) is checked against the survey
# schema: a parser that reads a key its table does not declare raises (ventflux.survey.schema.strict_schema).
os.environ.setdefault("VENTFLUX_STRICT_SCHEMA", "1")

matplotlib.use("Agg")


def survey_site(name="Test Site", *, depth="2500 m", absolute_pressure=None, ambient_temperature="2.0 degC",
                ambient_salinity=34.6, draws=None, seed=None) -> str:
    """The ``[site]`` block (and ``[run]`` when ``draws`` or ``seed`` is given) of the tests' survey files.

    A fictional site at 10° N, 100° W and 2500 m; ``absolute_pressure`` replaces the depth, and
    ``ambient_salinity=None`` leaves the salinity to its default. Pass ``draws="{draws}"`` to keep a
    placeholder for ``str.format``.
    """
    where = f'absolute_pressure = "{absolute_pressure}"' if absolute_pressure else f'depth = "{depth}"'
    lines = ["", "[site]", f'name = "{name}"', where, "latitude = 10.0", "longitude = -100.0",
             f'ambient_temperature = "{ambient_temperature}"']
    if ambient_salinity is not None:
        lines.append(f"ambient_salinity = {ambient_salinity}")
    if draws is not None or seed is not None:
        lines += ["", "[run]"] + ([f"draws = {draws}"] if draws is not None else []) + \
            ([f"seed = {seed}"] if seed is not None else [])
    return "\n".join(lines) + "\n"
