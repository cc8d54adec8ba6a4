"""Ensemble members: find a file's member dimension, number it, select one member.

A file may hold several members along a dimension (``number``, ``realization``,
``member`` ...), one member as a scalar coordinate, or none. The canonical
Dataset has an integer ``member`` dimension, or a scalar ``member`` coordinate
when one member was kept.
"""

import numpy as np

from kit.io.messages import input_error, join_names

__all__ = ["MEMBER_NAMES", "canonical_member", "select_member"]

#: names of an ensemble-member dimension or scalar coordinate
MEMBER_NAMES = (
    "member",
    "number",
    "realization",
    "ens",
    "ensemble",
    "ensemble_member",
    "realisation",
    "mem",
)


def canonical_member(ds, where):
    """Rename a file's member dimension to ``member`` with integer numbers.

    Parameters
    ----------
    ds : xarray.Dataset
        One file, on its canonical time axis.
    where : str
        File named in error messages.

    Returns
    -------
    ds : xarray.Dataset
        With a ``member`` dimension of integers (the file's own numbers when
        they are whole, else 0, 1, ...), or with the file's scalar member
        coordinate dropped.
    member_scalar : int or None
        The number of a file's single member (scalar coordinate), else None.

    Raises
    ------
    kit.errors.InputError
        A member number appears twice.
    """
    mem_name = None
    for n in list(ds.dims) + [c for c in ds.coords if ds[c].ndim == 0]:
        if n in MEMBER_NAMES or (
            n in ds.variables and ds[n].attrs.get("standard_name") == "realization"
        ):
            mem_name = n
            break
    member_scalar = None
    if mem_name is not None and mem_name in ds.dims:
        mv = ds[mem_name].values if mem_name in ds.coords else np.arange(ds.sizes[mem_name])
        try:
            mvi = np.asarray(mv).astype(np.int64)
            if not np.array_equal(mvi, np.asarray(mv).astype(np.float64)):
                raise ValueError
        except (TypeError, ValueError):
            mvi = np.arange(ds.sizes[mem_name])
        if np.unique(mvi).size != mvi.size:
            raise input_error(
                where, f"duplicate ensemble members in '{mem_name}'; expected distinct numbers"
            )
        if mem_name in ds.coords:
            ds = ds.drop_vars(mem_name)
        ds = ds.rename({mem_name: "member"}).assign_coords(member=("member", mvi))
    elif mem_name is not None:
        try:
            member_scalar = int(np.asarray(ds[mem_name].values))
        except (TypeError, ValueError):
            member_scalar = None
        ds = ds.drop_vars(mem_name)
    return ds, member_scalar


def select_member(ds, member, member_scalar, where):
    """Keep one ensemble member, or label a single-member run with its number.

    Parameters
    ----------
    ds : xarray.Dataset
        A run with or without a ``member`` dimension.
    member : int or None
        Member asked for; None keeps all.
    member_scalar : int or None
        Number of the run's single member when its files carry one as a scalar.
    where : str
        Run named in error messages.

    Returns
    -------
    xarray.Dataset
        Without the ``member`` dimension and with a scalar ``member`` coordinate
        when one member was selected or the run holds one; else unchanged.

    Raises
    ------
    kit.errors.InputError
        The member asked for is not in the run, or the run has no members.
    """
    if member is not None:
        if "member" in ds.dims:
            avail = [int(m) for m in ds["member"].values]
            if int(member) not in avail:
                raise input_error(
                    where, f"no ensemble member {member}; found members {join_names(avail)}"
                )
            ds = ds.sel(member=int(member))
        elif member_scalar is not None and int(member_scalar) == int(member):
            ds = ds.assign_coords(member=int(member))
        else:
            raise input_error(
                where,
                f"member={member} asked for but the run has no ensemble member "
                "dimension; expected member=None",
            )
    elif member_scalar is not None:
        ds = ds.assign_coords(member=int(member_scalar))
    return ds
