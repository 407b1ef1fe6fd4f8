"""Writing results: atomic netCDF files and chunked, resumable spectral runs.

A result file is either complete or absent: :func:`write_netcdf` writes to a temporary file in
the target's folder, flushes it to disk and renames it over the target (a rename within one
file system is atomic on POSIX), so a crash or a full disk never leaves half a file behind.

:func:`run_chunked` splits a long spectral run into chunks along the spectral dim and writes
each finished chunk into its region of one Zarr store (``<output>.zarr``), whose attributes
hold the run's manifest (a hash of the inputs, the chunk size). After a crash or a kill,
running again with ``resume=True`` computes only the chunks not marked done; a run whose
inputs have changed starts afresh. A file lock keeps a second run off the same output.
"""

from __future__ import annotations

import contextlib
import datetime as _datetime
import json
import os
import tempfile
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr

from lamina._cf import cf_encode

__all__ = [
    "SPECTRAL_DIMS",
    "check_writable",
    "input_hash",
    "run_chunked",
    "store_path",
    "write_netcdf",
]

#: Dims that :func:`run_chunked` recognises as spectral, in order of preference.
SPECTRAL_DIMS = ("wavelength", "wavenumber", "frequency")


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


#: Bytes in one netCDF chunk of a variable held in memory (about 4 MiB: large enough for the
#: compression to pay, small enough for the library's chunk cache).
CHUNK_BYTES = 1 << 22

#: Compression of floating-point variables (benchmarks/write.py: level 1 with the shuffle
#: filter compresses nearly as well as level 4, in a fraction of its time).
COMPRESSION = {"zlib": True, "complevel": 1, "shuffle": True}


def chunk_shape(variable: xr.Variable, target: int = CHUNK_BYTES) -> tuple[int, ...]:
    """The netCDF chunk shape of a variable: its dask chunks, else blocks of ``target`` bytes.

    A lazy variable is written chunk by chunk as it is computed, so its file chunks are its
    dask chunks (the largest of each dim); a variable in memory is cut along its longest dims
    until a chunk holds about ``target`` bytes.
    """
    if variable.chunks is not None:
        return tuple(max(1, *sizes) for sizes in variable.chunks)
    shape = [max(1, n) for n in variable.shape]
    while int(np.prod(shape)) * variable.dtype.itemsize > target and max(shape) > 1:
        longest = int(np.argmax(shape))
        shape[longest] = -(-shape[longest] // 2)
    return tuple(shape)


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
        Compress floating-point variables (zlib level 1 after the shuffle filter: lossless),
        in chunks that follow the data's dask chunks (:func:`chunk_shape`).

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
        name: {**_cf_keys(variable.encoding), **COMPRESSION,
               "chunksizes": chunk_shape(variable)}
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
# Chunked, resumable runs (the engine: lamina._chunked)
# --------------------------------------------------------------------------------------------


def input_hash(atmosphere: xr.Dataset, solve_kwargs: Mapping[str, Any]) -> str:
    """SHA-256 of everything that determines a run's result (inputs, options, version).

    Lazy (dask-backed) inputs are hashed slice by slice, never whole in memory; the hash does
    not depend on how the inputs are chunked.
    """
    from lamina import _chunked

    return _chunked.input_hash(atmosphere, solve_kwargs)


def store_path(path: str | os.PathLike[str]) -> Path:
    """The Zarr store that holds the chunks of a run writing ``path``.

    ``<path>.zarr`` beside a netCDF output (removed once the output is written), or ``path``
    itself when it ends in ``.zarr``.
    """
    from lamina import _chunked

    return _chunked.store_path(path)


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
    scheduler: Any = None,
    retries: int = 2,
    lock_timeout: float = 0.0,
    inputs_hash: str | None = None,
) -> xr.Dataset:
    """Solve a spectral run chunk by chunk into a Zarr store, resumably, and write the output.

    Each chunk is solved on its own and written into its region of the store
    (:func:`store_path`), followed by its completion mark; the run's manifest (input hash,
    chunk size, dim, variables) is in the store's attributes. After a crash or a kill,
    ``resume=True`` computes only the chunks without a mark. A netCDF output is written from
    the store chunk by chunk, atomically (:func:`write_netcdf`), and the store removed; an
    output ending in ``.zarr`` is the store itself. Memory is bounded by the chunk size.

    Parameters
    ----------
    atmosphere : xarray.Dataset
        Input of :func:`lamina.solve`, in memory or lazy (dask-backed: each chunk's inputs
        are computed only when the chunk is solved).
    solve_kwargs : mapping
        Keyword arguments of :func:`lamina.solve`; DataArrays along the spectral dim (e.g. a
        spectral surface albedo) are cut with the atmosphere.
    path : str or path-like
        The output: a netCDF file, or a Zarr store when it ends in ``.zarr``.
    chunk_size : int, optional
        Spectral points per chunk. Default: the chunk size of the unfinished run on disk, if
        any, else all points in one chunk. A different chunk size than the stored run's starts
        the run afresh.
    resume : bool
        Continue an unfinished run of the same inputs: chunks already marked done are not
        computed again. Without it such a run is refused (nothing finished is thrown away). A
        store of other inputs is replaced, with a note on standard error, either way.
    progress : bool or None
        Draw a progress bar on standard error: True (default) when it is a terminal, None
        likewise, False never.
    dim : str, optional
        The dim to split (default: the first of ``wavelength``, ``wavenumber``,
        ``frequency`` that the atmosphere has; without one the run is a single chunk).
    variables : sequence of str, optional
        Output variables to keep (default: all).
    attributes : mapping, optional
        Extra global attributes for the output (e.g. the scenario's title).
    solver : callable, optional
        Replacement for :func:`lamina.solve` with the same signature (default: lamina.solve).
    scheduler : str or distributed.Client, optional
        Run the chunks on a ``dask.distributed`` cluster: the scheduler's address or a
        client. The store must be on a file system the workers share.
    retries : int
        Times a chunk's task is retried on a cluster after it failed (default 2); a chunk
        whose worker is lost is recomputed elsewhere by the scheduler.
    lock_timeout : float
        Seconds to wait for another run on the same output to finish (default 0: refuse).
    inputs_hash : str, optional
        A hash that stands for the inputs (e.g. of a scenario file and the files it reads),
        instead of hashing ``atmosphere`` and ``solve_kwargs``.

    Returns
    -------
    xarray.Dataset
        The written output, opened lazily.

    Raises
    ------
    ValueError
        When ``path`` is not writable (checked before computing), when an unfinished run of
        the same inputs is on disk and ``resume`` is False, when another run holds the
        output's lock (:class:`lamina._chunked.RunInProgressError`), or for a bad argument.
    """
    from lamina import _chunked

    return _chunked.run_resumable(
        atmosphere, solve_kwargs, path, chunk_size, resume, progress, dim=dim,
        variables=variables, attributes=attributes, solver=solver, scheduler=scheduler,
        retries=retries, lock_timeout=lock_timeout, inputs_hash=inputs_hash)
