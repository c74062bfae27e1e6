#!/usr/bin/env bash
# scripts/distributed_env.sh DIR: an environment for `[solve] method = "distributed"`.
#
# PETSc, SLEPc, petsc4py, slepc4py and mpi4py come as Debian packages, built for Debian's
# own /usr/bin/python3 and its NumPy; nothing is compiled. DIR becomes a virtual environment
# of that Python with the system site packages visible, femcav installed editable from this
# checkout, and femcav's other dependencies pinned to versions that work with Debian's NumPy
# (which is never upgraded inside DIR). Running it again only fills in what is missing.
# The last line printed is the path of DIR's Python:
#     mpiexec -n 2 "$(scripts/distributed_env.sh .dist-env | tail -n 1)" -m femcav solve CASE
set -euo pipefail

if [ $# -ne 1 ]; then
    echo "usage: scripts/distributed_env.sh DIR" >&2
    exit 2
fi
dir=$1
root=$(cd "$(dirname "$0")/.." && pwd)
system_python=/usr/bin/python3
packages="python3-petsc4py python3-slepc4py python3-mpi4py python3-venv"
# The real-valued build: it has MUMPS and hypre (the complex one lacks hypre).
petsc_glob='/usr/lib/petscdir/petsc3.*/x86_64-linux-gnu-real/lib/python3/dist-packages'
slepc_glob='/usr/lib/slepcdir/slepc3.*/x86_64-linux-gnu-real/lib/python3/dist-packages'

say() { echo "distributed_env: $*" >&2; }

first_match() { compgen -G "$1" | sort -V | tail -n 1 || true; }

have_debian_stack() {
    [ -x "$system_python" ] && command -v mpiexec >/dev/null 2>&1 \
        && [ -n "$(first_match "$petsc_glob")" ] && [ -n "$(first_match "$slepc_glob")" ] \
        && "$system_python" -c "import mpi4py, ensurepip" >/dev/null 2>&1
}

if ! have_debian_stack; then
    if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
        say "installing $packages (Debian packages)"
        timeout 300 apt-get update -q >/dev/null 2>&1 || say "apt-get update failed"
        DEBIAN_FRONTEND=noninteractive timeout 900 apt-get install -y -q --no-install-recommends $packages >/dev/null 2>&1 \
            || { say "apt-get install $packages failed"; exit 1; }
    else
        say "missing: the Debian packages $packages (and an MPI launcher, mpiexec);"
        say "install them as root: apt-get update && apt-get install -y $packages"
        exit 1
    fi
fi
petsc_path=$(first_match "$petsc_glob")
slepc_path=$(first_match "$slepc_glob")

if [ ! -x "$dir/bin/python" ]; then
    say "making the virtual environment $dir from $system_python"
    "$system_python" -m venv --system-site-packages "$dir"
fi
python=$(cd "$dir" && pwd)/bin/python
# Debian's petsc4py.pth looks in /usr/lib/petsc, which only the -dev packages provide; point
# the environment straight at the real build instead.
site=$("$python" -c "import sysconfig; print(sysconfig.get_paths()['purelib'])")
printf '%s\n%s\n' "$petsc_path" "$slepc_path" > "$site/femcav_petsc.pth"

numpy_version=$("$python" -c "import numpy; print(numpy.__version__)")
constraints=$(mktemp)
trap 'rm -f "$constraints"' EXIT
# Versions pip resolved with NumPy held at Debian 12's 1.24.2 (Python 3.11), and with which
# the distributed tests pass; the NumPy pin keeps pip from upgrading it.
cat > "$constraints" <<EOF
numpy==$numpy_version
scipy==1.15.3
scikit-fem==12.0.2
meshio==5.3.5
gmsh==4.15.2
pyvista==0.49.2
vtk==9.7.2
pymetis==2025.2.2
pyamg==5.4.1
matplotlib==3.10.9
EOF
if ! "$python" -c "import femcav, scipy, skfem, meshio, gmsh, pyvista, pyamg, matplotlib" \
        >/dev/null 2>&1; then
    say "installing femcav's dependencies into $dir (pinned: see this script)"
    "$python" -m pip install --quiet --disable-pip-version-check -c "$constraints" \
        scipy scikit-fem meshio gmsh pyvista vtk pymetis pyamg matplotlib
    # femcav itself without its declared NumPy floor (the pinned stack above runs on 1.24)
    "$python" -m pip install --quiet --disable-pip-version-check --no-deps -e "$root"
fi
"$python" -c "import petsc4py, slepc4py, mpi4py, femcav" \
    || { say "the environment $dir cannot import petsc4py, slepc4py, mpi4py and femcav"; exit 1; }
echo "$python"
