"""Writing results: atomic netCDF files and chunked, resumable spectral runs.

A result file is either complete or absent: :func:`write_netcdf` writes to a temporary file in
the target's folder, flushes it to disk and renames it over the target (a rename within one
file system is atomic on POSIX), so a crash or a full disk never leaves half a file behind.

:func:`run_chunked` splits a long spectral run into chunks along the spectral dim, solves them
one at a time and keeps each finished chunk in its own file under ``<output>.parts/`` next to
a small JSON manifest that records a hash of the inputs. After a crash or a kill, running again
with ``resume=True`` skips the chunks already on disk, computes only the missing ones and
refuses to continue a run whose inputs have changed.
"""

from __future__ import annotations

import contextlib
import datetime as _datetime
import hashlib
import json
import os
import shutil
import tempfile
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr

from lamina._cf import cf_encode
from lamina.progress import ProgressBar

__all__ = [
    "SPECTRAL_DIMS",
    "check_writable",
    "input_hash",
    "parts_folder",
    "run_chunked",
    "write_netcdf",
]

#: Dims that :func:`run_chunked` recognises as spectral, in order of preference.
SPECTRAL_DIMS = ("wavelength", "wavenumber", "frequency")

_MANIFEST = "manifest.json"
_MANIFEST_FORMAT = "lamina chunked run"


def _version() -> str:
    import lamina

    return str(getattr(lamina, "__version__", "unknown"))


def check_writable(path: str | os.PathLike[str]) -> Path:
    """Check that a file can be written at ``path``, before any long computation.

    Parameters
    ----------
    path : str or path-like
        The output file.

    Returns
    -------
    Path
        ``path`` as an absolute :class:`~pathlib.Path`.

    Raises
    ------
    ValueError
        Naming the path, when its folder does not exist, is not a folder or does not accept
        new files, or when the path itself is a folder.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = tempfile.mkdtemp()
    >>> check_writable(pathlib.Path(folder) / "out.nc").name
    'out.nc'
    """
    target = Path(path).expanduser().absolute()
    parent = target.parent
    if not parent.exists():
        raise ValueError(f"cannot write {path}: its folder {parent} does not exist")
    if not parent.is_dir():
        raise ValueError(f"cannot write {path}: {parent} is not a folder")
    if target.is_dir():
        raise ValueError(f"cannot write {path}: it is a folder; expected a file name")
    # A real probe rather than os.access: it also catches read-only mounts and full quotas,
    # and it is honest for root, whom os.access always lets through.
    try:
        with tempfile.TemporaryFile(dir=parent, prefix=".lamina-probe-"):
            pass
    except OSError as error:
        raise ValueError(f"cannot write {path}: folder {parent} is not writable "
                         f"({error.strerror or error})") from None
    if target.exists() and not os.access(target, os.W_OK):
        raise ValueError(f"cannot write {path}: the existing file is read-only")
    return target


def _attribute(value: Any) -> Any:
    """A netCDF-storable version of an attribute (netCDF has no booleans, None or dicts)."""
    if isinstance(value, bool | np.bool_):
        return int(value)
    if value is None:
        return "none"
    if isinstance(value, Mapping):
        return json.dumps(value, sort_keys=True, default=str)
    if isinstance(value, list | tuple) and any(isinstance(v, str) for v in value):
        return ", ".join(map(str, value))
    if isinstance(value, list | tuple):
        return np.asarray(value, dtype=float) if value else ""
    return value


#: The words of the history line every write adds.
_WRITTEN_BY = "written by lamina"


def _prepared(dataset: xr.Dataset, settings: Mapping[str, Any] | None) -> xr.Dataset:
    missing = [
        (str(name), key)
        for name, variable in dataset.data_vars.items()
        for key in ("units", "long_name")
        if key not in variable.attrs
    ]
    if missing:
        name, key = missing[0]
        raise ValueError(f"dataset variable {name!r} has no {key!r} attribute; every data "
                         "variable needs units and long_name before it is written")
    out = dataset.copy(deep=False)
    attrs = dict(out.attrs)
    if settings:
        attrs.update(settings)
    attrs["lamina_version"] = _version()
    attrs["date_created"] = _datetime.datetime.now(_datetime.UTC).isoformat(timespec="seconds")
    attrs["Conventions"] = "CF-1.10"
    history = f"{attrs['date_created']} {_WRITTEN_BY} {attrs['lamina_version']}"
    attrs["history"] = (f"{attrs['history']}\n{history}" if attrs.get("history")
                        else history)
    out.attrs = {key: _attribute(value) for key, value in attrs.items()}
    for variable in out.variables.values():
        variable.attrs = {key: _attribute(value) for key, value in variable.attrs.items()}
    return cf_encode(out)


def _cf_keys(encoding: Mapping[str, Any]) -> dict[str, Any]:
    # the CF encodings (lamina._cf) that an explicit per-variable encoding must keep
    return {key: encoding[key] for key in ("_FillValue", "dtype") if key in encoding}


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def _fsync_folder(folder: Path) -> None:
    """Make the rename itself durable (best effort: not every platform can open folders)."""
    try:
        descriptor = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(descriptor)
    except OSError:
        pass
    finally:
        os.close(descriptor)


def write_netcdf(dataset: xr.Dataset, path: str | os.PathLike[str], *,
                 settings: Mapping[str, Any] | None = None, compress: bool = True) -> Path:
    """Write a Dataset to netCDF atomically, with CF global attributes.

    The data go to a temporary file in the same folder, which is flushed to disk and then
    renamed over ``path``. On any failure the temporary file is removed and ``path`` is left
    as it was (absent, or the previous complete file).

    Parameters
    ----------
    dataset : xarray.Dataset
        Every data variable must carry ``units`` and ``long_name`` attributes.
    path : str or path-like
        The output file.
    settings : mapping, optional
        Extra global attributes (e.g. solver settings) added to the dataset's own.
    compress : bool
        Compress floating-point variables with zlib (lossless).

    Returns
    -------
    Path
        The written file.

    Raises
    ------
    ValueError
        When a data variable lacks ``units`` or ``long_name``, or ``path`` is not writable.

    Notes
    -----
    Global attributes set: ``lamina_version``, ``date_created`` (UTC, ISO 8601),
    ``Conventions = "CF-1.10"`` and a ``history`` line. Booleans become 0/1 and tables JSON
    text, since netCDF attributes hold only numbers and text.
    """
    target = check_writable(path)
    prepared = _prepared(dataset, settings)
    encoding = {
        name: {**_cf_keys(variable.encoding), "zlib": True, "complevel": 4}
        for name, variable in prepared.variables.items()
        if compress and np.issubdtype(variable.dtype, np.floating) and variable.ndim > 0
    }
    descriptor, temporary_name = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.",
                                                  suffix=".tmp")
    os.close(descriptor)
    temporary = Path(temporary_name)
    try:
        prepared.to_netcdf(temporary, mode="w", format="NETCDF4", engine="netcdf4",
                           encoding=encoding)
        with open(temporary, "rb+") as handle:
            os.fsync(handle.fileno())
        # mkstemp makes the file private (0600); give it the mode a plain open() would
        os.chmod(temporary, 0o666 & ~_umask())
        os.replace(temporary, target)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            temporary.unlink()
        raise
    _fsync_folder(target.parent)
    return target


# --------------------------------------------------------------------------------------------
# Chunked, resumable runs
# --------------------------------------------------------------------------------------------


def _hash_update(digest: Any, value: Any) -> None:
    """Feed a value (nested containers, arrays, DataArrays, Datasets) into a hash."""
    if isinstance(value, xr.Dataset):
        digest.update(b"Dataset")
        for name in sorted(map(str, value.variables)):
            digest.update(name.encode())
            _hash_update(digest, value.variables[name])
        _hash_update(digest, dict(value.attrs))
    elif isinstance(value, xr.DataArray):
        digest.update(b"DataArray")
        _hash_update(digest, value.to_dataset(name="__value__"))
    elif isinstance(value, xr.Variable):
        digest.update(repr(value.dims).encode())
        _hash_update(digest, np.asarray(value.values))
        _hash_update(digest, dict(value.attrs))
    elif isinstance(value, np.ndarray):
        array = np.ascontiguousarray(value)
        digest.update(f"{array.dtype.str}{array.shape}".encode())
        digest.update(array.tobytes() if array.dtype != object else repr(array.tolist())
                      .encode())
    elif isinstance(value, Mapping):
        digest.update(b"{")
        for key in sorted(value, key=str):
            digest.update(str(key).encode())
            _hash_update(digest, value[key])
        digest.update(b"}")
    elif isinstance(value, list | tuple):
        digest.update(b"[")
        for item in value:
            _hash_update(digest, item)
        digest.update(b"]")
    else:
        digest.update(repr(value).encode())


def input_hash(atmosphere: xr.Dataset, solve_kwargs: Mapping[str, Any]) -> str:
    """SHA-256 of everything that determines a run's result (inputs, options, version)."""
    digest = hashlib.sha256()
    _hash_update(digest, atmosphere)
    _hash_update(digest, dict(solve_kwargs))
    _hash_update(digest, _version())
    return digest.hexdigest()


def parts_folder(path: str | os.PathLike[str]) -> Path:
    """The folder that holds the finished chunks of a chunked run writing ``path``."""
    target = Path(path).expanduser().absolute()
    return target.with_name(target.name + ".parts")


def _spectral_dim(atmosphere: xr.Dataset, dim: str | None) -> str | None:
    if dim is not None:
        if dim not in atmosphere.dims:
            dims = ", ".join(map(str, atmosphere.dims))
            raise ValueError(f"dim must be a dim of the atmosphere ({dims}); got {dim!r}")
        return dim
    return next((name for name in SPECTRAL_DIMS if name in atmosphere.dims), None)


def _write_json(data: Mapping[str, Any], path: Path) -> None:
    descriptor, temporary_name = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.",
                                                  suffix=".tmp")
    try:
        with os.fdopen(descriptor, "w", encoding="utf-8") as handle:
            json.dump(data, handle, indent=2, sort_keys=True)
            handle.write("\n")
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(temporary_name, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(temporary_name)
        raise


def _open_manifest(folder: Path, manifest: dict[str, Any], resume: bool) -> None:
    """Start a new parts folder, or check that the one on disk belongs to this run."""
    file = folder / _MANIFEST
    if folder.exists() and not resume:
        raise ValueError(f"{folder} holds an unfinished earlier run; pass resume=True "
                         "(lamina run --resume) to continue it, or delete the folder to "
                         "start again")
    if not folder.exists():
        folder.mkdir()
        _write_json(manifest, file)
        return
    try:
        found = json.loads(file.read_text(encoding="utf-8"))
    except (OSError, ValueError) as error:
        raise ValueError(f"cannot resume: {file} is missing or unreadable ({error}); delete "
                         f"{folder} to start again") from None
    if found.get("format") != _MANIFEST_FORMAT:
        raise ValueError(f"cannot resume: {file} is not a lamina manifest")
    for key, what in (("input_hash", "the inputs (atmosphere, solver options or lamina "
                                     "version) differ from those of the interrupted run"),
                      ("dim", "the spectral dim differs"),
                      ("chunk_size", "the chunk size differs"),
                      ("size", "the length of the spectral dim differs")):
        if found.get(key) != manifest[key]:
            raise ValueError(f"refusing to resume {folder}: {what} ({key} {found.get(key)!r} "
                             f"on disk, {manifest[key]!r} now); rerun with the same inputs or "
                             "delete the folder to start again")


def _slice_kwargs(kwargs: Mapping[str, Any], dim: str, where: slice) -> dict[str, Any]:
    """Cut the solve options that vary along the spectral dim to one chunk."""
    return {key: (value.isel({dim: where}) if isinstance(value, xr.DataArray)
                  and dim in value.dims else value) for key, value in kwargs.items()}


def _with_input_coordinate_attributes(result: xr.Dataset, atmosphere: xr.Dataset) -> xr.Dataset:
    """Give coordinates that came from the input (e.g. wavelength) the input's units back."""
    missing = {name: atmosphere[name].attrs for name in result.coords
               if name in atmosphere.coords and atmosphere[name].attrs
               and not result[name].attrs}
    if not missing:
        return result
    result = result.copy(deep=False)
    for name, attrs in missing.items():
        result[name].attrs = dict(attrs)
    return result


def _select(result: xr.Dataset, variables: Sequence[str]) -> xr.Dataset:
    missing = [name for name in variables if name not in result.data_vars]
    if missing:
        raise ValueError(f"variables: the solver produced no {missing[0]!r} for this run (it "
                         f"produced {', '.join(map(str, result.data_vars))})")
    return result[list(variables)]


def run_chunked(
    atmosphere: xr.Dataset,
    solve_kwargs: Mapping[str, Any],
    path: str | os.PathLike[str],
    chunk_size: int | None = None,
    resume: bool = False,
    progress: bool | None = True,
    *,
    dim: str | None = None,
    variables: Sequence[str] | None = None,
    attributes: Mapping[str, Any] | None = None,
    solver: Callable[..., xr.Dataset] | None = None,
) -> xr.Dataset:
    """Solve a spectral run chunk by chunk, keeping finished chunks, and write one netCDF file.

    Parameters
    ----------
    atmosphere : xarray.Dataset
        Input of :func:`lamina.solve`.
    solve_kwargs : mapping
        Keyword arguments of :func:`lamina.solve`; DataArrays along the spectral dim (e.g. a
        spectral surface albedo) are cut with the atmosphere.
    path : str or path-like
        The final netCDF file. Finished chunks live in ``<path>.parts/`` until the end.
    chunk_size : int, optional
        Spectral points per chunk (default: all in one chunk).
    resume : bool
        Continue an interrupted run: chunks found in ``<path>.parts/`` are not computed again.
        A resume whose inputs differ from the interrupted run's is refused.
    progress : bool or None
        Draw a progress bar on standard error: True (default) when it is a terminal, None
        likewise, False never.
    dim : str, optional
        The dim to split (default: the first of ``wavelength``, ``wavenumber``,
        ``frequency`` that the atmosphere has; without one the run is a single chunk).
    variables : sequence of str, optional
        Output variables to keep (default: all).
    attributes : mapping, optional
        Extra global attributes for the output file (e.g. the scenario's title).
    solver : callable, optional
        Replacement for :func:`lamina.solve` with the same signature (default: lamina.solve).

    Returns
    -------
    xarray.Dataset
        The whole result, as written to ``path``.

    Raises
    ------
    ValueError
        When ``path`` is not writable (checked before computing), when a parts folder from an
        earlier run exists and ``resume`` is False, or when resuming with different inputs.
    """
    target = check_writable(path)
    if chunk_size is not None and (isinstance(chunk_size, bool)
                                   or not isinstance(chunk_size, int | np.integer)
                                   or chunk_size < 1):
        raise ValueError(f"chunk_size must be a positive integer; got {chunk_size!r}")
    if solver is None:
        import lamina

        solver = lamina.solve
    spectral = _spectral_dim(atmosphere, dim)
    size = atmosphere.sizes[spectral] if spectral is not None else 1
    step = size if chunk_size is None else min(int(chunk_size), size)
    starts = list(range(0, size, step))
    folder = parts_folder(target)
    manifest = {
        "format": _MANIFEST_FORMAT,
        "input_hash": input_hash(atmosphere, {**solve_kwargs, "__variables__": variables}),
        "dim": spectral,
        "size": size,
        "chunk_size": step,
        "chunks": len(starts),
        "output": target.name,
        "lamina_version": _version(),
        "created": _datetime.datetime.now(_datetime.UTC).isoformat(timespec="seconds"),
    }
    _open_manifest(folder, manifest, resume)
    if resume:
        # temporaries of a final write that was killed outright (SIGKILL, power cut)
        for stale in target.parent.glob(f".{target.name}.*.tmp"):
            stale.unlink(missing_ok=True)
    files = [folder / f"part-{number:05d}.nc" for number in range(len(starts))]
    todo = [number for number, file in enumerate(files) if not file.is_file()]
    with ProgressBar(len(files), f"lamina: {spectral or 'run'} chunks",
                     enabled=None if progress else False) as bar:
        bar.advance(len(files) - len(todo))
        for number in todo:
            where = slice(starts[number], starts[number] + step)
            if spectral is None:
                chunk, kwargs = atmosphere, dict(solve_kwargs)
            else:
                chunk = atmosphere.isel({spectral: where})
                kwargs = _slice_kwargs(solve_kwargs, spectral, where)
            result = _with_input_coordinate_attributes(solver(chunk, **kwargs), chunk)
            if variables is not None:
                result = _select(result, variables)
            write_netcdf(result, files[number])
            bar.advance()
    parts = []
    for file in files:
        with xr.open_dataset(file) as part:
            parts.append(part.load())
    if spectral is None or len(parts) == 1:
        combined = parts[0]
    else:
        combined = xr.concat(parts, dim=spectral, data_vars="minimal", coords="minimal",
                             compat="equals", join="exact", combine_attrs="override")
    combined.attrs.pop("date_created", None)  # write_netcdf stamps the final file
    # The parts' own "written by lamina" lines record temporary files: the final write adds
    # the one line that matters, so that the history holds one entry per action.
    combined.attrs["history"] = "\n".join(
        line for line in str(combined.attrs.get("history", "")).splitlines()
        if _WRITTEN_BY not in line)
    write_netcdf(combined, target, settings=attributes)
    # Only now is it safe to forget the parts: the whole result is on disk. Rename first (an
    # atomic step) so that a kill during the removal leaves no half parts folder to trip over.
    finished = folder.with_name(folder.name + ".finished")
    if finished.exists():
        shutil.rmtree(finished)
    folder.rename(finished)
    shutil.rmtree(finished)
    with xr.open_dataset(target) as written:
        return written.load()
