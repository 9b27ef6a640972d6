"""Bad cubes for the inspect catalogue, written at test time (no binary cube is kept in git).

write_inputs(d, base) writes every file the inspect manifest names into directory d. base is
a small helmix cube (made from base.ini by the test); the helmix-layout cases are altered copies
of it, the foreign cases are written here with h5py. Each file holds exactly one defect.
"""

import os
import shutil

import numpy as np
import h5py

GRID = "/data/grid_0000000000"
N = 16


def _copy(base, d, name):
    path = os.path.join(d, name)
    shutil.copyfile(base, path)
    return path


def _replace(f, path, data):
    del f[path]
    f.create_dataset(path, data=data)


def _field(seed):
    return np.random.default_rng(seed).standard_normal((N, N, N))


def write_inputs(d, base):
    # files that are not HDF5 cubes
    with open(os.path.join(d, "text.h5"), "w") as f:
        f.write("this is a text file, not HDF5\n" * 50)
    open(os.path.join(d, "empty.h5"), "wb").close()
    raw = open(base, "rb").read()
    with open(os.path.join(d, "truncated.h5"), "wb") as f:
        f.write(raw[:len(raw) // 2])
    with open(os.path.join(d, "header_only.h5"), "wb") as f:
        f.write(raw[:512])
    os.mkdir(os.path.join(d, "cube_dir.h5"))

    # foreign files: one file of datasets, each case names its own through --vector
    with h5py.File(os.path.join(d, "foreign.h5"), "w") as f:
        for i, n in enumerate(("u", "v", "w")):
            f.create_dataset(n, data=_field(i))
        f.create_dataset("w_short", data=_field(3)[:, :, :8])
        f.create_dataset("flat", data=np.zeros((N, N)))
        f.create_dataset("four", data=np.zeros((N, N, N, 2)))
        f.create_dataset("text", data=np.array([b"abc"] * N))
        f.create_dataset("text3", data=np.full((N, N, N), b"x", dtype="S1"))
        f.create_dataset("compound", data=np.zeros((N, N, N), dtype=[("a", "f8"), ("b", "f8")]))
        f.create_dataset("empty", data=np.zeros((0, N, N)))
        f.create_dataset("tiny", data=np.zeros((2, 2, 2)))
        f.create_group("group")
        u = _field(0)
        u[3, 4, 5] = np.nan
        f.create_dataset("u_nan", data=u)
        v = _field(1)
        v[0, 0, 0] = np.inf
        f.create_dataset("v_inf", data=v)
        f.create_dataset("rho_neg", data=-np.ones((N, N, N)))
        f.create_dataset("rho_short", data=np.ones((N // 2, N, N)))
        f.create_dataset("rho_nan", data=np.full((N, N, N), np.nan))

    # altered copies of the helmix cube
    with h5py.File(_copy(base, d, "velocity_nan.h5"), "r+") as f:
        a = f[GRID + "/velocity_x"][()]
        a[3, 4, 5] = np.nan
        f[GRID + "/velocity_x"][...] = a
    with h5py.File(_copy(base, d, "velocity_inf.h5"), "r+") as f:
        a = f[GRID + "/velocity_y"][()]
        a[0, 0, 0] = -np.inf
        f[GRID + "/velocity_y"][...] = a
    with h5py.File(_copy(base, d, "velocity_z_missing.h5"), "r+") as f:
        del f[GRID + "/velocity_z"]
    with h5py.File(_copy(base, d, "velocity_z_short.h5"), "r+") as f:
        _replace(f, GRID + "/velocity_z", np.zeros((N, N, N // 2)))
    with h5py.File(_copy(base, d, "velocity_x_2d.h5"), "r+") as f:
        _replace(f, GRID + "/velocity_x", np.zeros((N, N)))
    with h5py.File(_copy(base, d, "velocity_y_strings.h5"), "r+") as f:
        _replace(f, GRID + "/velocity_y", np.full((N, N, N), b"x", dtype="S1"))
    with h5py.File(_copy(base, d, "attr_vrms_string.h5"), "r+") as f:
        del f["/helmix"].attrs["vrms"]
        f["/helmix"].attrs["vrms"] = np.bytes_(b"1.0")
    with h5py.File(_copy(base, d, "attr_vrms_nan.h5"), "r+") as f:
        f["/helmix"].attrs["vrms"] = np.nan
    with h5py.File(_copy(base, d, "attr_vrms_array.h5"), "r+") as f:
        del f["/helmix"].attrs["vrms"]
        f["/helmix"].attrs["vrms"] = np.array([1.0, 2.0])
    with h5py.File(_copy(base, d, "attr_edges_nan.h5"), "r+") as f:
        f["/simulation_parameters"].attrs["domain_right_edge"] = np.array([np.nan, 1.0, 1.0])
    with h5py.File(_copy(base, d, "attr_edges_huge.h5"), "r+") as f:
        f["/simulation_parameters"].attrs["domain_right_edge"] = np.array([1e308, 1.0, 1.0])
    with h5py.File(_copy(base, d, "attr_edges_elongated.h5"), "r+") as f:
        f["/simulation_parameters"].attrs["domain_right_edge"] = np.array([1.0, 1.0, 1e12])
    with h5py.File(_copy(base, d, "attr_edges_four.h5"), "r+") as f:
        del f["/simulation_parameters"].attrs["domain_right_edge"]
        f["/simulation_parameters"].attrs["domain_right_edge"] = np.array([1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0])
    with h5py.File(_copy(base, d, "attr_edges_strings.h5"), "r+") as f:
        del f["/simulation_parameters"].attrs["domain_right_edge"]
        f["/simulation_parameters"].attrs["domain_right_edge"] = np.array([b"1", b"1", b"1"])
    with h5py.File(_copy(base, d, "attr_fraction_string.h5"), "r+") as f:
        g = f["/helmix"]
        for k in ("realized_compressive_fraction", "expected_compressive_fraction"):
            if k in g.attrs:
                del g.attrs[k]
                g.attrs[k] = np.bytes_(b"0.3")
    with h5py.File(_copy(base, d, "attr_kmax_negative.h5"), "r+") as f:
        f["/helmix"].attrs["kmin"] = 5.0
        f["/helmix"].attrs["kmax"] = -3.0
    shutil.copyfile(base, os.path.join(d, "good.h5"))
