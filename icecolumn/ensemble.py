"""Ensembles: many columns from one spec file, run in batches, locally or on a cluster.

An *ensemble spec* (TOML) names a base configuration, a default forcing file and a
list of members, each with its own settings and optionally its own forcing::

    config = "my.toml"                 # optional, relative to the spec file
    forcing = "station_winter.csv"     # default forcing of every member
    set = {"grid.layers" = 20}         # optional, applied to every member

    [[member]]
    name = "low_flux"
    set = {"ocean.heat_flux" = 1.0}

    [[member]]
    name = "other_year"
    forcing = "other.csv"

    [sweep]                            # optional cartesian product
    "ocean.heat_flux" = [1.0, 2.0, 5.0]

    [output]
    variables = ["ice_thickness", "salt_flux"]   # optional reduced output
    interval = "1D"                              # optional, for every member

With a ``[sweep]`` and no ``[[member]]`` tables the sweep expands the base into
one member per combination (the last key varies fastest); with both, every listed
member is combined with every sweep combination.

Members are split into batches (rows of one kernel state array).  The kernel
integrates each member with its own step control, so a member's numbers do not
depend on which batch it ran in; a batch only ever holds members whose forcing
shares one time axis, so the forcing seen by the kernel is exactly each member's
own.  Batches run here, on a local process pool or on dask.distributed, and the
results are put back together in member order (:func:`run_members`) or streamed
into one NetCDF file as they finish (:func:`run_members_to_file`).
"""
from __future__ import annotations

import concurrent.futures
import difflib
import hashlib
import itertools
import multiprocessing
import os
from collections import deque
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Iterator, Sequence

import numpy as np
import xarray as xr

from . import config as C
from . import model
from .errors import IceColumnError, InputError
from .forcing import read_forcing
from .output import to_dataset, write_netcdf
from .textfile import check_new_output, read_user_text, write_atomically

__all__ = ["EnsembleSpec", "load_spec", "run_members", "run_members_to_file", "output_variable_names",
           "SCALE_HINT"]

SCALE_HINT = 'pip install "icecolumn[scale]"'

_SPEC_KEYS = ("config", "forcing", "set", "member", "sweep", "output")
_MEMBER_KEYS = ("name", "config", "forcing", "set")
_OUTPUT_KEYS = ("variables", "interval")
#: Per-member metadata written with every ensemble (kept in reduced output too).
_MEMBER_META = ("member_config", "member_forcing_file", "member_forcing_sha256", "member_steps_accepted",
                "member_steps_rejected")


# --------------------------------------------------------------------------- spec


@dataclass
class EnsembleSpec:
    """A resolved ensemble: one :class:`~icecolumn.model.Member` and one name per member."""

    source: str
    members: list[model.Member]
    names: list[str]
    variables: tuple[str, ...] | None = None
    interval: str | None = None
    extra: dict = field(default_factory=dict)

    def run(self, **kwargs) -> xr.Dataset:
        """:func:`run_members` on this spec (keyword arguments passed on)."""
        kwargs.setdefault("variables", self.variables)
        return run_members(self.members, names=self.names, source=self.source, **kwargs)

    def run_to_file(self, path, **kwargs) -> Path:
        """:func:`run_members_to_file` on this spec (keyword arguments passed on)."""
        kwargs.setdefault("variables", self.variables)
        return run_members_to_file(self.members, path, names=self.names, source=self.source, **kwargs)


def _hint(word: str, options: Sequence[str]) -> str:
    close = difflib.get_close_matches(word, list(options), n=1)
    return f"did you mean {close[0]!r}?" if close else "valid keys: " + ", ".join(repr(o) for o in options)


def _flatten_settings(table: Any, where: str, prefix: str = "") -> dict[str, Any]:
    """``{"ocean.heat_flux": 1}`` or ``{ocean = {heat_flux = 1}}`` -> ``{"ocean.heat_flux": 1}``."""
    if not isinstance(table, dict):
        raise InputError(f"{where}: expected a table such as {{\"ocean.heat_flux\" = 1.0}}, got {table!r}")
    flat: dict[str, Any] = {}
    for key, value in table.items():
        name = f"{prefix}{key}"
        if isinstance(value, dict):
            flat.update(_flatten_settings(value, where, f"{name}."))
        else:
            flat[name] = value
    return flat


def _nest(flat: dict[str, Any], where: str) -> dict[str, dict[str, Any]]:
    out: dict[str, dict[str, Any]] = {}
    for name, value in flat.items():
        section, sep, key = name.partition(".")
        if not sep or not key or "." in key:
            raise InputError(f"{where}: setting {name!r} is not of the form 'section.key' (e.g. 'ocean.heat_flux')")
        out.setdefault(section, {})[key] = value
    return out


def _apply_settings(base: C.Config, flat: dict[str, Any], where: str) -> C.Config:
    """``base`` with the settings ``flat`` applied in one validated step."""
    if not flat:
        return base
    merged = base.to_dict()
    for section, table in _nest(flat, where).items():
        if section not in merged:
            hint = _hint(section, list(merged))
            raise InputError(f"{where}: unknown section [{section}] in setting '{section}.{next(iter(table))}'; "
                             f"{hint}")
        merged[section].update(table)
    try:
        return C.load_config(None, merged)
    except InputError as err:
        text = str(err)
        if text.startswith("override: "):
            text = text[len("override: "):]
        raise InputError(f"{where}: {text}") from None


def _resolve(spec_dir: Path, text: Any, where: str, what: str) -> Path:
    if not isinstance(text, str) or not text.strip():
        raise InputError(f"{where}: '{what}' must be a file name (text), got {text!r}")
    p = Path(text)
    return p if p.is_absolute() else spec_dir / p


def _value_text(value: Any) -> str:
    return f"{value:g}" if isinstance(value, float) else str(value)


def load_spec(path, overrides: dict[str, dict[str, Any]] | None = None,
              column_map: dict[str, str] | None = None) -> EnsembleSpec:
    """Read an ensemble spec (TOML) and build every member.

    Parameters
    ----------
    path : str or pathlib.Path
        The spec file; file names inside it are relative to its folder. [1]
    overrides : dict, optional
        ``{section: {key: value}}`` applied to the base configuration after the spec's
        top-level ``set`` (members and sweeps still change settings on top of it), e.g.
        from the command line's ``--set``. [units of each key]
    column_map : dict, optional
        Forcing column names ``{ours: theirs}`` added to the base configuration's
        ``[forcing] columns`` (e.g. from ``--column``). [1]

    Returns
    -------
    spec : EnsembleSpec
        Members (configuration + forcing) and names in spec order.

    Raises
    ------
    InputError
        One line naming the spec file, the member or key, and the problem.
    """
    src = str(path)
    spec_dir = Path(path).resolve().parent
    text, _ = read_user_text(path, "ensemble spec")
    data = C.parse_toml(text, src)
    for key in data:
        if key not in _SPEC_KEYS:
            raise InputError(f"{src}: unknown key {key!r}; {_hint(key, _SPEC_KEYS)}")

    base = C.default_config()
    if "config" in data:
        base = C.load_config(_resolve(spec_dir, data["config"], src, "config"))
    base = _apply_settings(base, _flatten_settings(data.get("set", {}), f"{src}: set"), f"{src}: set")
    if overrides:
        base = base.updated(overrides)

    out = data.get("output", {})
    if not isinstance(out, dict):
        raise InputError(f"{src}: 'output' must be a table [output]")
    for key in out:
        if key not in _OUTPUT_KEYS:
            raise InputError(f"{src}: unknown key {key!r} in [output]; {_hint(key, _OUTPUT_KEYS)}")
    variables = out.get("variables")
    if variables is not None:
        if (not isinstance(variables, list) or not variables
                or not all(isinstance(v, str) and v for v in variables)):
            raise InputError(f"{src}: [output] variables must be a non-empty list of variable names")
        variables = tuple(variables)
    interval = out.get("interval")
    if interval is not None:
        base_check = _apply_settings(base, {"output.interval": interval}, f"{src}: [output] interval")
        interval = base_check.output.interval

    raw_members = data.get("member", [])
    if not isinstance(raw_members, list) or not all(isinstance(m, dict) for m in raw_members):
        raise InputError(f"{src}: 'member' must be written as [[member]] tables")
    sweep = data.get("sweep", {})
    if not isinstance(sweep, dict):
        raise InputError(f"{src}: 'sweep' must be a table [sweep] of 'section.key' = [values]")
    sweep = _flatten_settings(sweep, f"{src}: [sweep]")
    for key, values in sweep.items():
        if not isinstance(values, list) or not values:
            raise InputError(f"{src}: [sweep] {key!r}: expected a non-empty list of values, got {values!r}")
    if not raw_members and not sweep:
        raise InputError(f"{src}: the ensemble has no members (add [[member]] tables or a [sweep])")

    forcing_cache: dict[Path, xr.Dataset] = {}

    def forcing_for(table: dict, where: str) -> xr.Dataset:
        text_ = table.get("forcing", data.get("forcing"))
        if text_ is None:
            raise InputError(f"{where}: no forcing file (give 'forcing' at the top of the spec or in the member)")
        p = _resolve(spec_dir, text_, where, "forcing")
        if not p.is_file():
            raise InputError(f"{where}: forcing file {str(text_)!r} not found (looked for {p})")
        if p not in forcing_cache:
            forcing_cache[p] = read_forcing(p, base.forcing.column_map(column_map),
                                            max_gap=base.forcing.max_gap_seconds)
        return forcing_cache[p]

    listed = raw_members or [{}]
    names: list[str] = []
    members: list[model.Member] = []
    combos = list(itertools.product(*sweep.values())) if sweep else [()]
    for i, table in enumerate(listed):
        label = table.get("name", f"member_{i + 1:03d}") if raw_members else ""
        where = f"{src}: member {label!r}" if raw_members else src
        for key in table:
            if key not in _MEMBER_KEYS:
                raise InputError(f"{where}: unknown key {key!r}; {_hint(key, _MEMBER_KEYS)}")
        if raw_members and (not isinstance(label, str) or not label.strip()):
            raise InputError(f"{src}: member {i + 1}: 'name' must be non-empty text")
        mbase = C.load_config(_resolve(spec_dir, table["config"], where, "config")) if "config" in table else base
        mbase = _apply_settings(mbase, _flatten_settings(table.get("set", {}), f"{where}: set"), f"{where}: set")
        forcing = forcing_for(table, where)
        for combo in combos:
            settings = dict(zip(sweep.keys(), combo))
            tag = ",".join(f"{k}={_value_text(v)}" for k, v in settings.items())
            name = "/".join(t for t in (label, tag) if t)
            mwhere = f"{src}: member {name!r}"
            cfg = _apply_settings(mbase, settings, mwhere)
            if interval is not None:
                cfg = cfg.replace("output", interval=interval)
            names.append(name)
            members.append(model.Member(cfg, forcing))
    seen: set[str] = set()
    for name in names:
        if name in seen:
            raise InputError(f"{src}: member {name!r}: the name is used twice")
        seen.add(name)
    check_members(members, names, src)
    return EnsembleSpec(source=src, members=members, names=names, variables=variables, interval=interval)


def check_members(members: Sequence[model.Member], names: Sequence[str], source: str = "ensemble") -> np.ndarray:
    """Check that the members can share one output file; return their output times.

    Every member needs the same ``[grid] layers``, output interval and output times
    (the run period of its own configuration and forcing).
    """
    if not members:
        raise InputError(f"{source}: the ensemble has no members")
    c0 = members[0].config
    times0 = None
    for name, m in zip(names, members):
        where = f"{source}: member {name!r}"
        if m.config.grid.layers != c0.grid.layers:
            raise InputError(f"{where}: [grid] layers = {m.config.grid.layers} differs from member {names[0]!r} "
                             f"({c0.grid.layers}); all members need the same layers")
        if m.config.output.interval_seconds != c0.output.interval_seconds:
            raise InputError(f"{where}: [output] interval = {m.config.output.interval!r} differs from member "
                             f"{names[0]!r} ({c0.output.interval!r}); all members need the same interval")
        start, end = model.run_period(m.config, m.forcing, where)
        times = model.output_times(start, end, m.config.output.interval_seconds)
        if times0 is None:
            times0 = times
        elif times.shape != times0.shape or not np.array_equal(times, times0):
            raise InputError(f"{where}: runs {str(times[0])[:16]} to {str(times[-1])[:16]} but member {names[0]!r} "
                             f"runs {str(times0[0])[:16]} to {str(times0[-1])[:16]}; set the same [run] start and "
                             "end for every member")
    return times0


# --------------------------------------------------------------------------- one batch


def output_variable_names(member: model.Member) -> list[str]:
    """Names of the data variables and coordinates a run writes (from a one-hour run)."""
    t0 = member.forcing["time"].values[0]
    cfg = member.config.replace("grid", layers=3).replace(
        "run", start=str(t0)[:19], end=str(t0 + np.timedelta64(1, "h"))[:19]).replace("output", interval="1h")
    ds = to_dataset(model.simulate([model.Member(cfg, member.forcing)]), keep_member=True)
    return sorted(set(ds.variables) - set(ds.dims))


def _reduce(ds: xr.Dataset, variables: Sequence[str] | None) -> xr.Dataset:
    if variables is None:
        return ds
    keep = list(dict.fromkeys([*variables, *[v for v in _MEMBER_META if v in ds]]))
    out = ds[keep]
    drop = [c for c in out.coords if c not in out.dims and c != "member_name"
            and not any(set(ds[c].dims) <= set(out[v].dims) for v in variables if v in out.data_vars)]
    return out.drop_vars(drop)


def _run_batch(members: Sequence[model.Member], names: Sequence[str], variables, progress=None) -> xr.Dataset:
    """Run one batch and return its Dataset (module-level: picklable for pools and dask)."""
    try:
        raw = model.simulate(members, progress=progress)
    except IceColumnError as err:
        raise type(err)(f"batch of members {names[0]!r} to {names[-1]!r}: {err}") from None
    ds = to_dataset(raw, keep_member=True)
    ds = ds.assign_coords(member_name=("member", np.array(list(names), dtype=object),
                                       {"long_name": "ensemble member name"}))
    ds["member_config"] = ("member", np.array([m.config.to_toml() for m in members], dtype=object),
                           {"long_name": "fully resolved configuration of the member (TOML)"})
    ds["member_forcing_file"] = ("member", np.array([str(m.forcing.attrs.get("source_file", "<in memory>"))
                                                     for m in members], dtype=object),
                                 {"long_name": "forcing file of the member"})
    ds["member_forcing_sha256"] = ("member", np.array([str(m.forcing.attrs.get("sha256", "")) for m in members],
                                                      dtype=object),
                                   {"long_name": "SHA-256 of the member's forcing file"})
    ds["member_steps_accepted"] = ("member", raw.counters[:, 0].astype(np.int64),
                                   {"long_name": "accepted solver steps of the member", "units": "1"})
    ds["member_steps_rejected"] = ("member", raw.counters[:, 1].astype(np.int64),
                                   {"long_name": "rejected solver steps of the member", "units": "1"})
    return _reduce(ds, variables)


def _axis_key(forcing: xr.Dataset) -> str:
    t = np.ascontiguousarray(forcing["time"].values.astype("datetime64[ns]").astype(np.int64))
    return hashlib.sha256(t.tobytes()).hexdigest()


def plan_batches(members: Sequence[model.Member], batch_size: int) -> list[list[int]]:
    """Member indices of each batch: consecutive members sharing one forcing time axis.

    Members are grouped by forcing time axis (groups in order of first appearance,
    members in spec order within a group) and each group is cut into batches of at
    most ``batch_size``.
    """
    if batch_size < 1:
        raise InputError(f"batch size must be at least 1, got {batch_size}")
    groups: dict[str, list[int]] = {}
    cache: dict[int, str] = {}
    for i, m in enumerate(members):
        key = cache.get(id(m.forcing))
        if key is None:
            key = cache[id(m.forcing)] = _axis_key(m.forcing)
        groups.setdefault(key, []).append(i)
    return [idx[j:j + batch_size] for idx in groups.values() for j in range(0, len(idx), batch_size)]


# --------------------------------------------------------------------------- executors


def _import_distributed():
    try:
        import distributed  # noqa: F401
    except ImportError:
        raise InputError(f"running on dask needs dask.distributed, which is not installed: {SCALE_HINT}") from None
    return distributed


class _Runner:
    """Submits batches to one executor and yields finished batches in submission order."""

    def __init__(self, workers, scheduler, use_dask, processes):
        self.kind = "local"
        self.pool = self.client = self.cluster = None
        self._scheduler_arg = scheduler
        if workers is not None and workers < 1:
            raise InputError(f"workers must be at least 1, got {workers}")
        if scheduler is not None or use_dask:
            distributed = _import_distributed()
            self.kind = "dask"
            if scheduler is None:
                self.cluster = distributed.LocalCluster(n_workers=workers or os.cpu_count() or 1,
                                                        threads_per_worker=1, processes=processes,
                                                        dashboard_address=None)
                self.client = distributed.Client(self.cluster)
            elif isinstance(scheduler, str):
                try:
                    self.client = distributed.Client(scheduler, timeout="20s")
                except (OSError, TimeoutError) as err:
                    raise InputError(f"--scheduler {scheduler}: cannot connect to the dask scheduler: {err}") from None
            else:  # an existing distributed.Client
                self.client = scheduler
            self.slots = max(1, sum(self.client.nthreads().values()))
        elif workers is not None and workers > 1:
            self.kind = "pool"
            self.pool = concurrent.futures.ProcessPoolExecutor(
                max_workers=workers, mp_context=multiprocessing.get_context("spawn"))
            self.slots = workers
        else:
            self.slots = 1

    def close(self):
        if self.pool is not None:
            self.pool.shutdown(cancel_futures=True)
        if self.cluster is not None:
            self.client.close()
            self.cluster.close()
        elif self.client is not None and isinstance(self._scheduler_arg, str):
            self.client.close()

    def run(self, jobs: list[tuple[list[int], list, list]], variables,
            tick: Callable[[float], None]) -> Iterator[tuple[list[int], xr.Dataset]]:
        """Yield ``(indices, Dataset)`` per batch, at most ``2 * slots`` batches in flight."""
        if self.kind == "local":
            for idx, mem, nam in jobs:
                nb = len(idx)
                ds = _run_batch(mem, nam, variables, progress=lambda i, n, nb=nb: tick(nb * i / n))
                yield idx, ds
            return
        pending: deque = deque()
        todo = iter(jobs)
        limit = 2 * self.slots

        def submit(job):
            idx, mem, nam = job
            if self.kind == "pool":
                fut = self.pool.submit(_run_batch, mem, nam, variables)
            else:
                fut = self.client.submit(_run_batch, mem, nam, variables, pure=False)
            pending.append((idx, fut))

        for job in itertools.islice(todo, limit):
            submit(job)
        while pending:
            idx, fut = pending.popleft()
            ds = fut.result()
            tick(float(len(idx)))
            nxt = next(todo, None)
            if nxt is not None:
                submit(nxt)
            yield idx, ds


def _prepare(members, names, batch_size, variables, interval, source):
    members = list(members)
    if not members:
        raise InputError(f"{source}: the ensemble has no members")
    names = [f"member_{i + 1:03d}" for i in range(len(members))] if names is None else [str(n) for n in names]
    if len(names) != len(members):
        raise InputError(f"{source}: {len(names)} names for {len(members)} members")
    if len(set(names)) != len(names):
        dup = next(n for n in names if names.count(n) > 1)
        raise InputError(f"{source}: member {dup!r}: the name is used twice")
    if interval is not None:
        members = [model.Member(m.config.replace("output", interval=interval), m.forcing) for m in members]
    times = check_members(members, names, source)
    if variables is not None:
        variables = tuple(variables)
        known = output_variable_names(members[0])
        for v in variables:
            if v not in known:
                raise InputError(f"{source}: [output] variables: unknown variable {v!r}; "
                                 f"{_hint(v, known)}")
    batches = plan_batches(members, batch_size)
    jobs = [(idx, [members[i] for i in idx], [names[i] for i in idx]) for idx in batches]
    return members, names, times, variables, jobs


def _progress_ticker(progress, total_members: int, intervals: int):
    total = max(1, total_members * intervals)
    done = [0.0]

    def tick(members_done: float) -> None:  # called with member fractions of the current batch
        if progress is not None:
            progress(int(round(done[0] + members_done * intervals)), total)

    def finish(nb: int) -> None:
        done[0] += nb * intervals
        if progress is not None:
            progress(int(round(done[0])), total)

    return tick, finish


def _finish_attrs(ds: xr.Dataset, accepted: int, rejected: int, n: int, source: str) -> None:
    ds.attrs["solver_steps_accepted"] = int(accepted)
    ds.attrs["solver_steps_rejected"] = int(rejected)
    ds.attrs["ensemble_members"] = int(n)
    ds.attrs["ensemble_spec"] = source
    ds.attrs["ensemble_comment"] = ("icecolumn_config and forcing_file are those of the first member; "
                                    "member_config and member_forcing_file hold every member's")


def _run_common(members, names, batch_size, workers, scheduler, use_dask, processes, progress, variables,
                interval, source):
    members, names, times, variables, jobs = _prepare(members, names, batch_size, variables, interval, source)
    tick_inner, finish = _progress_ticker(progress, len(members), times.size - 1)
    runner = _Runner(workers, scheduler, use_dask, processes)
    return members, names, jobs, variables, runner, tick_inner, finish


def run_members(members: Sequence[model.Member], *, names: Sequence[str] | None = None, batch_size: int = 256,
                workers: int | None = None, scheduler=None, use_dask: bool = False, processes: bool = True,
                progress: Callable[[int, int], None] | None = None, variables: Sequence[str] | None = None,
                interval: str | None = None, source: str = "ensemble") -> xr.Dataset:
    """Run an ensemble in batches and return one Dataset with a ``member`` dimension.

    Parameters
    ----------
    members : sequence of Member
        Configurations and forcings (same layers, interval and run period).
    names : sequence of str, optional
        Member names (the ``member_name`` coordinate); default ``member_001``, ...
    batch_size : int
        Most members per batch (one kernel call covers a batch).
    workers : int, optional
        With more than one: a local process pool of this size; with ``use_dask``:
        the number of workers of a ``distributed.LocalCluster``.
    scheduler : str or distributed.Client, optional
        Address of a dask scheduler (``"tcp://host:8786"``) or a connected client.
    use_dask : bool
        Run on dask.distributed (a LocalCluster when no scheduler is given).
    processes : bool
        LocalCluster workers as processes (True) or threads in this process.
    progress : callable(i, n), optional
        Called as batches advance.
    variables : sequence of str, optional
        Keep only these variables (plus coordinates and per-member metadata).
    interval : str, optional
        Output interval for every member (replaces ``[output] interval``).
    source : str
        Name used first in error messages (e.g. the spec file).

    Returns
    -------
    xarray.Dataset
        Members in the given order; numbers identical however the run was split.
    """
    members, names, jobs, variables, runner, tick, finish = _run_common(
        members, names, batch_size, workers, scheduler, use_dask, processes, progress, variables, interval, source)
    parts: list[xr.Dataset] = []
    order: list[int] = []
    try:
        for idx, ds in runner.run(jobs, variables, tick):
            parts.append(ds)
            order.extend(idx)
            finish(len(idx))
    finally:
        runner.close()
    accepted = sum(int(p.attrs["solver_steps_accepted"]) for p in parts)
    rejected = sum(int(p.attrs["solver_steps_rejected"]) for p in parts)
    ds = parts[0] if len(parts) == 1 else xr.concat(parts, dim="member", data_vars="minimal", coords="minimal",
                                                    compat="override", combine_attrs="override")
    if order != list(range(len(order))):
        ds = ds.isel(member=np.argsort(np.asarray(order), kind="stable"))
    ds = ds.assign_coords(member=("member", np.arange(len(order), dtype=np.int32), dict(ds["member"].attrs)))
    _finish_attrs(ds, accepted, rejected, len(order), source)
    return ds


def _write_rows(nc, idx: list[int], ds: xr.Dataset) -> None:
    """Write the member rows ``idx`` of every member-dimensioned variable of ``ds``."""
    rows = np.asarray(idx)
    contiguous = bool(np.all(np.diff(rows) == 1))
    for name, var in ds.variables.items():
        if "member" not in var.dims:
            continue
        target = nc.variables[name]
        if tuple(target.dimensions) != tuple(var.dims):
            raise IceColumnError(f"internal: variable {name} has dimensions {target.dimensions} in the file "
                                 f"but {var.dims} in a batch")
        axis = var.dims.index("member")
        values = var.values
        if name == "member":
            values = rows.astype(np.int32)
        if contiguous:
            key = [slice(None)] * var.ndim
            key[axis] = slice(int(rows[0]), int(rows[-1]) + 1)
            target[tuple(key)] = values
        else:
            for j, r in enumerate(rows):
                key = [slice(None)] * var.ndim
                key[axis] = int(r)
                target[tuple(key)] = np.take(values, j, axis=axis)


def run_members_to_file(members: Sequence[model.Member], path, *, overwrite: bool = False,
                        names: Sequence[str] | None = None, batch_size: int = 256, workers: int | None = None,
                        scheduler=None, use_dask: bool = False, processes: bool = True,
                        progress: Callable[[int, int], None] | None = None,
                        variables: Sequence[str] | None = None, interval: str | None = None,
                        source: str = "ensemble") -> Path:
    """Run an ensemble and stream the batches into one NetCDF file as they finish.

    The file is written under a temporary name in the target folder and renamed at
    the end (no partial files).  Memory holds only the batches in flight (about two
    per worker), so it is bounded by ``batch_size``, not by the number of members.
    Arguments as :func:`run_members`; the file holds what :func:`run_members`
    returns.
    """
    import netCDF4

    path = Path(path)
    check_new_output(path, overwrite)
    members, names, jobs, variables, runner, tick, finish = _run_common(
        members, names, batch_size, workers, scheduler, use_dask, processes, progress, variables, interval, source)

    def stream(tmp: str) -> None:
        accepted = rejected = 0
        nc = None
        try:
            for idx, ds in runner.run(jobs, variables, tick):
                accepted += int(ds.attrs["solver_steps_accepted"])
                rejected += int(ds.attrs["solver_steps_rejected"])
                if nc is None:  # the first batch defines the file layout (member is unlimited)
                    first = ds.copy()
                    first.encoding["unlimited_dims"] = {"member"}
                    _finish_attrs(first, 0, 0, len(members), source)
                    write_netcdf(first, tmp, overwrite=True)
                    nc = netCDF4.Dataset(tmp, "a")
                    nc.set_auto_mask(False)
                _write_rows(nc, idx, ds)
                nc.sync()
                finish(len(idx))
            nc.setncattr("solver_steps_accepted", np.int64(accepted))
            nc.setncattr("solver_steps_rejected", np.int64(rejected))
        finally:
            if nc is not None:
                nc.close()

    try:
        write_atomically(path, stream, suffix=".part")
    finally:
        runner.close()
    return path
