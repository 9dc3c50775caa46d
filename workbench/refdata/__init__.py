"""Reference line collection: hash-checked shipped sets, atomic data and lab sets.

The shipped sets (``optical``, ``xray``, ``hydrogen_like``) live in
``reference_sets/`` with a ``manifest.json`` giving each file's SHA-256; they
are built offline by ``reference_sets/build/build_all.py`` from pinned registry
packages. :func:`load_set` checks a file's hash before it parses it. Every line
table has the canonical columns of :data:`CANONICAL_SCHEMA`. Laboratories add
their own measured lines as CSV (:func:`import_lab_set`, :func:`save_lab_set`;
format in ``reference_sets/LAB_SETS.md``).

The ``optical`` set has one row per transition: hyperfine and isotope
components are blended (:mod:`workbench.refdata.blend`) and kept in a
components table, read with :func:`load_components`.
"""

from __future__ import annotations

from workbench.refdata.atomic import (
    ionization_energy_eV,
    partition_function,
    partition_function_method,
)
from workbench.refdata.blend import BLEND_GAP_NM, COMPONENT_SCHEMA, ISOTOPE_GAP_NM
from workbench.refdata.columns import CANONICAL_SCHEMA, conform, empty_table
from workbench.refdata.elements import SYMBOLS, atomic_number, is_element_symbol, symbol
from workbench.refdata.labsets import LAB_COLUMNS, import_lab_set, save_lab_set
from workbench.refdata.loader import ReferenceSet, load_components, load_set
from workbench.refdata.manifest import (
    data_version,
    default_root,
    list_sets,
    read_manifest,
    sha256_file,
    verify_sets,
)

__all__ = [
    "BLEND_GAP_NM",
    "CANONICAL_SCHEMA",
    "COMPONENT_SCHEMA",
    "ISOTOPE_GAP_NM",
    "LAB_COLUMNS",
    "SYMBOLS",
    "ReferenceSet",
    "atomic_number",
    "conform",
    "data_version",
    "default_root",
    "empty_table",
    "import_lab_set",
    "ionization_energy_eV",
    "is_element_symbol",
    "list_sets",
    "load_components",
    "load_set",
    "partition_function",
    "partition_function_method",
    "read_manifest",
    "save_lab_set",
    "sha256_file",
    "symbol",
    "verify_sets",
]
