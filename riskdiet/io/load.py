"""Open a study file of any accepted kind."""

from __future__ import annotations

from pathlib import Path

from riskdiet.errors import Problem, StudyError
from riskdiet.io.source import ACCEPTED, MISTAKES
from riskdiet.model import Study


def load_study(path: str | Path) -> Study:
    """Read, validate and build a study from a ``.json`` or ``.xlsx`` file.

    Parameters
    ----------
    path : str or Path
        Study file. The file is only read, never modified.

    Raises
    ------
    StudyError
        When the file is missing, of a kind not accepted, or invalid; every
        problem names its location.
    """
    path = Path(path)
    name = str(path)
    suffix = path.suffix.lower()
    if not path.exists():
        raise StudyError([Problem(name, "an existing study file", "no such file")])
    if path.is_dir():
        raise StudyError([Problem(name, "a study file", "a folder")])
    if suffix in MISTAKES:
        raise StudyError([Problem(name, f"{ACCEPTED}; save the file as .xlsx in your "
                                  "spreadsheet program", MISTAKES[suffix])])
    if suffix in (".json", ".xlsx"):
        if suffix == ".json":
            from riskdiet.io.json_study import read_json_study as read
        else:
            from riskdiet.io.workbook import read_workbook_study as read
        study = read(path)
        from riskdiet.analysis.maps import check_settings_map

        # every command runs the same checks, so `check` catches what `solve` would refuse
        check_settings_map(study)
        return study
    raise StudyError([Problem(name, ACCEPTED, f'a file ending in "{suffix or "(nothing)"}"')])
