"""Data files a study names (potential tables, heat-capacity tables): found and read safely.

A study is data: it must not make the tool read files elsewhere on the
machine, so a data file is given relative to the study file's folder, and
absolute paths and paths that climb out of that folder (``..``, or a link
pointing outside) are refused.  ``mdsim run`` copies the files it uses into
the run directory, so a run directory stays readable wherever it is moved.
The content of a data file is only ever read as numbers, never evaluated.
"""
from pathlib import Path

__all__ = ["contained_file", "data_file", "data_lines"]


def contained_file(ctx, table, key, value, base_dir, what):
    """Resolve a data-file path given in a study and keep it inside the study's folder.

    Parameters
    ----------
    ctx : mdsim.study.values.Context
    table, key : str
        Where the path is given, for messages.
    value : str
        The path as written, relative to ``base_dir``.
    base_dir : str or os.PathLike
        The study file's folder.
    what : str
        What the file holds ("a two-column r, u table"), for the hint.

    Returns
    -------
    Path
        The absolute, resolved path (it may not exist).
    """
    path = Path(value)
    hint = f"copy the file next to the study file ({what})"
    if path.is_absolute():
        ctx.fail(table, key, value, "absolute paths are not accepted",
                 "a path relative to the study file's folder", hint)
    base = Path(base_dir).resolve()
    full = (base / path).resolve()
    if not full.is_relative_to(base):
        ctx.fail(table, key, value, f"the path leads outside the study file's folder '{base}'",
                 "a path inside that folder", hint)
    return full


def data_file(ctx, table, key, value, base_dir, what):
    """:func:`contained_file`, and the file must exist and be a regular file.

    A device or a pipe (``/dev/zero``) is refused: it would be read for ever.
    """
    path = contained_file(ctx, table, key, value, base_dir, what)
    if not path.exists():
        ctx.fail(table, key, value, f"file '{path}' does not exist", "",
                 "paths are relative to the study file")
    if path.is_dir():
        ctx.fail(table, key, value, f"'{path}' is a directory, not a file", "", f"give {what}")
    if not path.is_file():
        ctx.fail(table, key, value, f"'{path}' is not a regular file", "", f"give {what}")
    return path


def data_lines(ctx, table, key, value, path):
    """The lines of a UTF-8 data file with ``#`` comments and blank lines removed.

    Returns
    -------
    list of str
        Stripped, in file order.
    """
    try:
        with open(path, encoding="utf-8") as fh:
            lines = [line.split("#", 1)[0].strip() for line in fh]
    except UnicodeDecodeError:
        ctx.fail(table, key, value, f"file '{path}' is not UTF-8 text", "", "save it as UTF-8")
    except OSError as exc:
        ctx.fail(table, key, value, f"file '{path}' cannot be read ({exc.strerror})", "",
                 "check its permissions")
    return [line for line in lines if line]
