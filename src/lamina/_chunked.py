"""Resumable chunked runs on a Zarr store: the engine behind :func:`lamina.io.run_chunked`.

A run is cut into chunks along its spectral dim. Each chunk is solved on its own and written
into its region of one Zarr store (``<output>.zarr`` beside a netCDF output, or the output
itself when it ends in ``.zarr``) through xarray's region writes; then its completion mark (one
element of the store's ``lamina_chunk_done`` array) is set. The store's metadata is created
once, from a lazy template of the full shape built from the first chunk's result, and its
attributes hold the run's manifest (input hash, chunk size, dim, variables). Resuming computes
only the chunks without a mark. A netCDF output is written from the store chunk by chunk and
renamed into place (:func:`lamina.io.write_netcdf`), and the store is removed after.

Memory is bounded by the chunk size: inputs are hashed slice by slice, each chunk's inputs are
loaded only when it is solved, and nothing joins the whole result in memory. A file lock
(``.<output>.lock``, kept as an empty file) stops a second run on the same output.
"""

from __future__ import annotations

import contextlib
import datetime as _datetime
import hashlib
import json
import os
import shutil
import sys
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr

from lamina.io import SPECTRAL_DIMS, check_writable, write_netcdf
from lamina.progress import ProgressBar

_FORMAT = "lamina resumable run, zarr store 1"
_MANIFEST = "lamina_run"
_DONE = "lamina_chunk_done"
_CHUNK_DIM = "lamina_chunk"
#: Elements of an input array hashed at a time (bounded memory for lazy inputs).
_HASH_ELEMENTS = 1 << 22


class RunInProgressError(ValueError):
    """Another run holds the lock of the same output."""


def _version() -> str:
    import lamina

    return str(getattr(lamina, "__version__", "unknown"))


def _say(message: str) -> None:
    print(f"lamina: {message}", file=sys.stderr, flush=True)


# --------------------------------------------------------------------------------------------
# Paths, lock, hash
# --------------------------------------------------------------------------------------------


def store_path(path: str | os.PathLike[str]) -> Path:
    """The Zarr store of a run writing ``path``: ``path`` itself if it ends in ``.zarr``."""
    target = Path(path).expanduser().absolute()
    return target if target.suffix == ".zarr" else target.with_name(target.name + ".zarr")


def lock_path(path: str | os.PathLike[str]) -> Path:
    """The lock file of a run writing ``path`` (a hidden file beside it)."""
    target = Path(path).expanduser().absolute()
    return target.with_name(f".{target.name}.lock")


@contextlib.contextmanager
def _locked(target: Path, timeout: float) -> Iterator[None]:
    import filelock

    lock = filelock.FileLock(lock_path(target), timeout=timeout)
    try:
        lock.acquire()
    except filelock.Timeout:
        waited = f" after waiting {timeout:g} s" if timeout > 0 else ""
        raise RunInProgressError(
            f"another lamina run is writing {target}{waited} (it holds {lock.lock_file}); "
            "wait for it to finish or choose another output") from None
    try:
        yield
    finally:
        lock.release()


def _hash_array(digest: Any, variable: xr.Variable) -> None:
    """Feed an array's C-order bytes, slice by slice along its first axis (lazy or not)."""
    data = variable.data
    digest.update(f"{variable.dtype.str}{variable.shape}{variable.dims}".encode())
    if variable.dtype == object:
        digest.update(repr(np.asarray(data).tolist()).encode())
        return
    if variable.ndim == 0:
        digest.update(np.ascontiguousarray(np.asarray(data)).tobytes())
        return
    row = max(1, int(np.prod(variable.shape[1:])))
    step = max(1, _HASH_ELEMENTS // row)
    for start in range(0, variable.shape[0], step):
        block = np.asarray(data[start:start + step])
        digest.update(memoryview(np.ascontiguousarray(block)).cast("B"))


def hash_update(digest: Any, value: Any) -> None:
    """Feed a value (nested containers, arrays, DataArrays, Datasets) into a hash."""
    if isinstance(value, xr.Dataset):
        digest.update(b"Dataset")
        for name in sorted(map(str, value.variables)):
            digest.update(name.encode())
            hash_update(digest, value.variables[name])
        hash_update(digest, dict(value.attrs))
    elif isinstance(value, xr.DataArray):
        digest.update(b"DataArray")
        hash_update(digest, value.to_dataset(name="__value__"))
    elif isinstance(value, xr.Variable):
        _hash_array(digest, value)
        hash_update(digest, dict(value.attrs))
    elif isinstance(value, np.ndarray):
        _hash_array(digest, xr.Variable(tuple(f"axis{i}" for i in range(value.ndim)), value))
    elif isinstance(value, Mapping):
        digest.update(b"{")
        for key in sorted(value, key=str):
            digest.update(str(key).encode())
            hash_update(digest, value[key])
        digest.update(b"}")
    elif isinstance(value, list | tuple):
        digest.update(b"[")
        for item in value:
            hash_update(digest, item)
        digest.update(b"]")
    else:
        digest.update(repr(value).encode())


def input_hash(atmosphere: xr.Dataset, solve_kwargs: Mapping[str, Any]) -> str:
    """SHA-256 of everything that determines a run's result (inputs, options, version)."""
    digest = hashlib.sha256()
    hash_update(digest, atmosphere)
    hash_update(digest, dict(solve_kwargs))
    hash_update(digest, _version())
    return digest.hexdigest()


#: Copies of a block's inputs and outputs the solver holds at once (an upper estimate; the
#: measured figures are in benchmarks/memory.py).
_COPIES = 4


def _available_memory() -> int | None:
    """Bytes of memory available to a new allocation (Linux /proc/meminfo), or None."""
    try:
        with open("/proc/meminfo", encoding="ascii") as handle:
            for line in handle:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        return None
    return None


def chunk_bytes(atmosphere: xr.Dataset, solve_kwargs: Mapping[str, Any],
                chunk_size: int | None, dim: str | None = None) -> int:
    """An estimate of the memory one chunk of a run takes while it is solved, in bytes."""
    spectral = _spectral_dim(atmosphere, dim)
    per_column = sum(int(np.prod([n for d, n in variable.sizes.items()
                                  if d in ("layer", "level", "moment")]))
                     for variable in atmosphere.data_vars.values())
    views = np.size(solve_kwargs.get("view_zenith", [])) * max(
        1, np.size(solve_kwargs.get("view_azimuth", [])))
    levels = atmosphere.sizes.get("layer", 1) + 1
    outputs = levels * (12 + 2 * views)
    columns = int(np.prod([n for d, n in atmosphere.sizes.items()
                           if d not in ("layer", "level", "moment")]))
    if spectral is not None and chunk_size is not None:
        columns = columns // atmosphere.sizes[spectral] * min(chunk_size,
                                                             atmosphere.sizes[spectral])
    columns *= max(1, np.size(solve_kwargs.get("sun_zenith", 0.0)))
    return int(_COPIES * 8 * columns * (per_column + outputs))


def check_memory(atmosphere: xr.Dataset, solve_kwargs: Mapping[str, Any],
                 chunk_size: int | None, dim: str | None = None) -> None:
    """Refuse, before anything is allocated, a chunk larger than the memory available."""
    available = _available_memory()
    if available is None:
        return
    need = chunk_bytes(atmosphere, solve_kwargs, chunk_size, dim)
    if need <= available:
        return
    spectral = _spectral_dim(atmosphere, dim)
    size = atmosphere.sizes[spectral] if spectral is not None else 1
    step = size if chunk_size is None else min(chunk_size, size)
    fits = max(1, int(step * available / 2 / need))
    hint = (f"; a chunk size of about {fits} would fit (--chunk-size)" if spectral is not None
            else "; reduce the number of columns, streams or output angles")
    raise ValueError(f"the run needs about {need / 1e9:.1f} GB for each chunk of {step} "
                     f"{spectral or 'columns'}, more than the {available / 1e9:.1f} GB "
                     f"of memory available{hint}")


# --------------------------------------------------------------------------------------------
# The store: manifest, marks, template, regions
# --------------------------------------------------------------------------------------------


def _read_manifest(store: Path) -> dict[str, Any] | None:
    """The manifest of a lamina store, or None when ``store`` is not one."""
    import zarr

    try:
        group = zarr.open_group(store, mode="r")
        return dict(json.loads(group.attrs[_MANIFEST]))
    except (OSError, ValueError, KeyError, TypeError, zarr.errors.BaseZarrError):
        return None


def stored_chunk_size(path: str | os.PathLike[str]) -> int | None:
    """The chunk size of an unfinished run writing ``path``, or None if there is none."""
    manifest = _read_manifest(store_path(path))
    return None if manifest is None else int(manifest["chunk_size"])


def _done_marks(store: Path, n_chunks: int) -> np.ndarray:
    import zarr

    marks = np.asarray(zarr.open_group(store, mode="r")[_DONE][:], dtype=bool)
    return marks if marks.size == n_chunks else np.zeros(n_chunks, dtype=bool)


def _template(first: xr.Dataset, coordinate: xr.Variable | None, dim: str | None, size: int,
              step: int, n_chunks: int, manifest: Mapping[str, Any]) -> xr.Dataset:
    """A lazy Dataset of the whole run's shape, chunked like the run, from its first chunk."""
    import dask.array

    data_vars: dict[str, xr.Variable] = {}
    coords: dict[str, xr.Variable] = {}
    for name, variable in first.variables.items():
        if dim is not None and name == dim and coordinate is not None:
            new = xr.Variable(dim, np.asarray(coordinate.values), dict(variable.attrs))
        elif dim is not None and dim in variable.dims:
            shape = tuple(size if d == dim else n for d, n in variable.sizes.items())
            chunks = tuple(step if d == dim else n for d, n in variable.sizes.items())
            new = xr.Variable(variable.dims, dask.array.zeros(shape, dtype=variable.dtype,
                                                              chunks=chunks),
                              dict(variable.attrs))
        elif variable.dtype.kind in "US":
            # labels as variable-length text: the data type Zarr 3 specifies
            new = xr.Variable(variable.dims, np.asarray(variable.values.astype(str),
                                                        dtype=object), dict(variable.attrs))
        else:
            new = xr.Variable(variable.dims, variable.data, dict(variable.attrs))
        (coords if name in first.coords else data_vars)[str(name)] = new
    data_vars[_DONE] = xr.Variable(_CHUNK_DIM, dask.array.zeros(n_chunks, dtype=np.int8,
                                                                chunks=1))
    attrs = dict(first.attrs)
    attrs[_MANIFEST] = json.dumps(dict(manifest), sort_keys=True)
    return xr.Dataset(data_vars, coords, attrs)


def _write_region(result: xr.Dataset, store: Path, dim: str | None, where: slice,
                  number: int) -> None:
    """Write one chunk's result into its region, then its completion mark."""
    if dim is not None:
        along = result.drop_vars([name for name, variable in result.variables.items()
                                  if dim not in variable.dims])
        for variable in along.variables.values():
            variable.encoding = {}
        along.to_zarr(store, region={dim: where}, mode="r+", consolidated=False)
    mark = xr.Dataset({_DONE: (_CHUNK_DIM, np.ones(1, dtype=np.int8))})
    mark.to_zarr(store, region={_CHUNK_DIM: slice(number, number + 1)}, mode="r+",
                 consolidated=False)


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


def _select(result: xr.Dataset, variables: Sequence[str] | None) -> xr.Dataset:
    if variables is None:
        return result
    missing = [name for name in variables if name not in result.data_vars]
    if missing:
        raise ValueError(f"variables: the solver produced no {missing[0]!r} for this run (it "
                         f"produced {', '.join(map(str, result.data_vars))})")
    return result[list(variables)]


def _slice_kwargs(kwargs: Mapping[str, Any], dim: str | None, where: slice) -> dict[str, Any]:
    """Cut the solve options that vary along the spectral dim to one chunk."""
    return {key: (value.isel({dim: where}) if isinstance(value, xr.DataArray)
                  and dim in value.dims else value) for key, value in kwargs.items()}


def solve_chunk(solver: Callable[..., xr.Dataset], atmosphere: xr.Dataset,
                kwargs: Mapping[str, Any], variables: Sequence[str] | None) -> xr.Dataset:
    """Solve one chunk in memory: lazy inputs are computed here (on a worker, if any)."""
    import dask

    with dask.config.set(scheduler="synchronous"):
        chunk = atmosphere.load()
        kwargs = {key: value.load() if isinstance(value, xr.DataArray) else value
                  for key, value in kwargs.items()}
        result = _select(_with_input_coordinate_attributes(solver(chunk, **kwargs), chunk),
                         variables)
        return result.load()


def chunk_task(solver: Callable[..., xr.Dataset], atmosphere: xr.Dataset,
               kwargs: Mapping[str, Any], variables: Sequence[str] | None, store: Path,
               dim: str | None, where: slice, number: int) -> int:
    """Solve a chunk and write it into the store (the task a worker runs)."""
    _write_region(solve_chunk(solver, atmosphere, kwargs, variables), store, dim, where,
                  number)
    return number


# --------------------------------------------------------------------------------------------
# The run
# --------------------------------------------------------------------------------------------


@dataclass
class _Run:
    """What a run is: its chunks, where they go and what they are made from."""

    atmosphere: xr.Dataset
    solve_kwargs: Mapping[str, Any]
    solver: Callable[..., xr.Dataset]
    variables: Sequence[str] | None
    dim: str | None
    size: int
    step: int
    store: Path
    manifest: dict[str, Any]

    @property
    def starts(self) -> list[int]:
        return list(range(0, self.size, self.step))

    def where(self, number: int) -> slice:
        return slice(number * self.step, min((number + 1) * self.step, self.size))

    def inputs(self, number: int) -> tuple[xr.Dataset, dict[str, Any]]:
        if self.dim is None:
            return self.atmosphere, dict(self.solve_kwargs)
        where = self.where(number)
        return (self.atmosphere.isel({self.dim: where}),
                _slice_kwargs(self.solve_kwargs, self.dim, where))


def _spectral_dim(atmosphere: xr.Dataset, dim: str | None) -> str | None:
    if dim is not None:
        if dim not in atmosphere.dims:
            dims = ", ".join(map(str, atmosphere.dims))
            raise ValueError(f"dim must be a dim of the atmosphere ({dims}); got {dim!r}")
        return dim
    return next((name for name in SPECTRAL_DIMS if name in atmosphere.dims), None)


def _reuse_or_restart(store: Path, manifest: dict[str, Any], chunk_size: int | None,
                      resume: bool) -> tuple[int | None, bool]:
    """Decide from the store on disk: (chunk size to use, whether the store is kept).

    A store of the same inputs is continued with ``resume`` (refused without it, so that no
    finished chunk is thrown away by mistake); a store of other inputs, or of another chunk
    size the caller asks for, is replaced, and the replacement is said on standard error.
    """
    if not store.exists():
        return chunk_size, False
    found = _read_manifest(store)
    if found is None or found.get("format") != _FORMAT:
        raise ValueError(f"{store} exists and is not the store of a lamina run; delete or "
                         "move it, or choose another output")
    same = all(found.get(key) == manifest[key] for key in ("input_hash", "dim", "size"))
    if not same:
        _say(f"{store}: the inputs (atmosphere, solver options, variables or lamina version) "
             "differ from those of the run stored there; starting afresh")
        return chunk_size, False
    if chunk_size is not None and chunk_size != found["chunk_size"]:
        _say(f"{store}: chunk size {chunk_size} asked for, {found['chunk_size']} on disk; "
             "starting afresh with the new chunk size")
        return chunk_size, False
    marks = _done_marks(store, int(found["chunks"]))
    if not resume and not marks.all():
        raise ValueError(f"{store} holds an unfinished earlier run of the same inputs "
                         f"({int(marks.sum())} of {marks.size} chunks done); pass resume=True "
                         "(lamina run --resume) to continue it, or delete it to start again")
    return int(found["chunk_size"]), True


def _plan(atmosphere: xr.Dataset, solve_kwargs: Mapping[str, Any], target: Path,
          chunk_size: int | None, resume: bool, dim: str | None,
          variables: Sequence[str] | None, solver: Callable[..., xr.Dataset],
          digest: str | None) -> tuple[_Run, bool]:
    spectral = _spectral_dim(atmosphere, dim)
    size = atmosphere.sizes[spectral] if spectral is not None else 1
    if digest is None:
        digest = input_hash(atmosphere, {**solve_kwargs, "__variables__": variables})
    manifest: dict[str, Any] = {
        "format": _FORMAT, "input_hash": digest, "dim": spectral, "size": size,
        "variables": None if variables is None else list(variables),
        "output": target.name, "lamina_version": _version(),
        "created": _datetime.datetime.now(_datetime.UTC).isoformat(timespec="seconds"),
    }
    store = store_path(target)
    chunk_size, kept = _reuse_or_restart(store, manifest, chunk_size, resume)
    step = size if chunk_size is None else min(int(chunk_size), size)
    manifest["chunk_size"] = step
    manifest["chunks"] = len(range(0, size, step))
    run = _Run(atmosphere, solve_kwargs, solver, variables, spectral, size, step, store,
               manifest)
    return run, kept


def _create_store(run: _Run, compute_first: Callable[[], xr.Dataset]) -> None:
    """Solve the first chunk, create the store's metadata from it and write its region."""
    if run.store.exists():
        _rmtree(run.store)
    first = compute_first()
    coordinate = (run.atmosphere.variables.get(run.dim) if run.dim is not None else None)
    template = _template(first, coordinate, run.dim, run.size, run.step,
                         len(run.starts), run.manifest)
    template.to_zarr(run.store, mode="w", compute=False, consolidated=False)
    _write_region(first, run.store, run.dim, run.where(0), 0)


def _compute_locally(run: _Run, todo: list[int], bar: ProgressBar) -> None:
    for number in todo:
        atmosphere, kwargs = run.inputs(number)
        chunk_task(run.solver, atmosphere, kwargs, run.variables, run.store, run.dim,
                   run.where(number), number)
        bar.advance()


@contextlib.contextmanager
def _client(scheduler: Any) -> Iterator[Any]:
    from distributed import Client

    if isinstance(scheduler, Client):
        yield scheduler
        return
    try:
        client = Client(scheduler, timeout="30s")
    except OSError as error:
        raise ValueError(f"scheduler: cannot reach a dask scheduler at {scheduler!r} "
                         f"({error})") from None
    with client:
        yield client


def _compute_distributed(run: _Run, todo: list[int], bar: ProgressBar, client: Any,
                         retries: int) -> None:
    from distributed import as_completed

    futures = []
    for number in todo:
        atmosphere, kwargs = run.inputs(number)
        futures.append(client.submit(chunk_task, run.solver, atmosphere, kwargs,
                                     run.variables, run.store, run.dim, run.where(number),
                                     number, retries=retries, pure=False,
                                     key=f"lamina-chunk-{number}-{run.manifest['created']}"))
    try:
        for future in as_completed(futures):
            future.result()
            bar.advance()
    finally:
        client.cancel(futures)


def _rmtree(folder: Path) -> None:
    shutil.rmtree(folder)


def _retire(store: Path) -> Path:
    """Rename a store out of the way (one atomic step) before it is removed."""
    finished = store.with_name(store.name + ".finished")
    if finished.exists():
        _rmtree(finished)
    store.rename(finished)
    return finished


def _remove_store(store: Path) -> None:
    # Only once the whole result is on disk. Renamed first, so that a kill during the
    # removal leaves no half store to trip over.
    _rmtree(_retire(store))


def _finish(run: _Run, target: Path, attributes: Mapping[str, Any] | None) -> xr.Dataset:
    """Write the output from the store (netCDF: chunk by chunk, atomically) and tidy up."""
    if target == run.store:
        import zarr

        group = zarr.open_group(run.store, mode="r+")
        group.attrs.update({key: str(value) if not isinstance(value, int | float) else value
                            for key, value in (attributes or {}).items()})
        return xr.open_zarr(run.store, consolidated=False).drop_vars(_DONE)
    stored = xr.open_zarr(run.store, consolidated=False).drop_vars(_DONE)
    stored.attrs.pop(_MANIFEST, None)
    for variable in stored.variables.values():
        variable.encoding = {}
    try:
        write_netcdf(stored, target, settings=attributes)
    finally:
        stored.close()
    _remove_store(run.store)
    return xr.open_dataset(target, chunks={})


def run_resumable(atmosphere: xr.Dataset, solve_kwargs: Mapping[str, Any],
                  path: str | os.PathLike[str], chunk_size: int | None = None,
                  resume: bool = False, progress: bool | None = True, *,
                  dim: str | None = None, variables: Sequence[str] | None = None,
                  attributes: Mapping[str, Any] | None = None,
                  solver: Callable[..., xr.Dataset] | None = None,
                  scheduler: Any = None, retries: int = 2, lock_timeout: float = 0.0,
                  inputs_hash: str | None = None) -> xr.Dataset:
    """The body of :func:`lamina.io.run_chunked` (documented there)."""
    target = Path(path).expanduser().absolute()
    if target.suffix == ".zarr" and target.is_dir():  # a store: its folder must take files
        check_writable(target.with_name(target.name + ".lock"))
    else:
        target = check_writable(path)
    if chunk_size is not None and (isinstance(chunk_size, bool)
                                   or not isinstance(chunk_size, int | np.integer)
                                   or chunk_size < 1):
        raise ValueError(f"chunk_size must be a positive integer; got {chunk_size!r}")
    if isinstance(retries, bool) or not isinstance(retries, int | np.integer) or retries < 0:
        raise ValueError(f"retries must be a non-negative integer; got {retries!r}")
    if solver is None:
        import lamina

        solver = lamina.solve
    with _locked(target, lock_timeout):
        run, kept = _plan(atmosphere, solve_kwargs, target, chunk_size, resume, dim,
                          variables, solver, inputs_hash)
        # temporaries of a final write that was killed outright (SIGKILL, power cut)
        for stale in target.parent.glob(f".{target.name}.*.tmp"):
            stale.unlink(missing_ok=True)
        with contextlib.ExitStack() as stack:
            client = (stack.enter_context(_client(scheduler)) if scheduler is not None
                      else None)

            def compute_first() -> xr.Dataset:
                inputs = (run.solver, *run.inputs(0), run.variables)
                if client is None:
                    return solve_chunk(*inputs)
                return client.submit(solve_chunk, *inputs, retries=retries,
                                     pure=False).result()

            with ProgressBar(len(run.starts), f"lamina: {run.dim or 'run'} chunks",
                             enabled=None if progress else False) as bar:
                if not kept:
                    _create_store(run, compute_first)
                marks = _done_marks(run.store, len(run.starts))
                bar.advance(int(marks.sum()))
                todo = [int(number) for number in np.flatnonzero(~marks)]
                if client is None:
                    _compute_locally(run, todo, bar)
                elif todo:
                    _compute_distributed(run, todo, bar, client, int(retries))
        return _finish(run, target, attributes)
