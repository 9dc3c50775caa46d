"""Every exception the workbench raises on purpose.

Each error carries a *problem* (what went wrong, naming the file, row, column
or value) and a *remedy* (what the user can do about it). ``str(err)`` joins
them as ``"<problem>. Fix: <remedy>"`` so that the CLI and the app can show
one line that is useful on its own. ``exit_code`` is what the CLI returns.

Exception tree::

    WorkbenchError                      exit 1  (base; never raised bare)
    ├── InputError                      exit 2  bad input from the user
    │   ├── FileFormatError                     unreadable or malformed file
    │   ├── ColumnMappingError                  columns not found / ambiguous
    │   ├── UnitError                           unit missing, unknown or implausible
    │   └── ValueRangeError                     value outside its valid domain
    ├── PhysicsError                    exit 2  a calculation cannot be done as asked
    │   ├── OutOfRangeError                     formula used outside its validity range
    │   └── InsufficientDataError               too few lines / too small energy span
    ├── ReferenceDataError              exit 3  the reference collection is unusable
    │   ├── ManifestError                       manifest missing, malformed or incomplete
    │   ├── DataIntegrityError                  a data file's SHA-256 does not match
    │   ├── UnknownReferenceSetError            no set with that id
    │   └── LabSetValidationError               a lab CSV has problems (all listed)
    ├── CaseFileError                   exit 5  the case store refused an operation
    │   ├── NotFoundError               exit 6  no such case / item / record
    │   ├── CustodyRuleError                    chain-of-custody rule violated
    │   ├── StoreIntegrityError         exit 4  tampering or corruption detected
    │   └── BundleError                 exit 4  a case bundle is malformed or tampered
    ├── SigningError                    exit 4  keys and signatures
    │   ├── KeyFileError                        key file unreadable / wrong passphrase
    │   └── SignatureInvalidError               verification failed (says why)
    └── ComparisonError                 exit 2  questioned-vs-known cannot be done as asked
"""

from __future__ import annotations

__all__ = [
    "BundleError",
    "CaseFileError",
    "ColumnMappingError",
    "ComparisonError",
    "CustodyRuleError",
    "DataIntegrityError",
    "FileFormatError",
    "InputError",
    "InsufficientDataError",
    "KeyFileError",
    "LabSetValidationError",
    "ManifestError",
    "NotFoundError",
    "OutOfRangeError",
    "PhysicsError",
    "ReferenceDataError",
    "SignatureInvalidError",
    "SigningError",
    "StoreIntegrityError",
    "UnitError",
    "UnknownReferenceSetError",
    "ValueRangeError",
    "WorkbenchError",
]


class WorkbenchError(Exception):
    """Base of all deliberate workbench errors.

    Parameters
    ----------
    problem : str
        What went wrong, specific enough to find it (file, row, column, value).
    remedy : str, optional
        What the user can do to fix it.
    """

    exit_code: int = 1

    def __init__(self, problem: str, remedy: str = "") -> None:
        self.problem = problem.rstrip(". ")
        self.remedy = remedy.rstrip(". ")
        super().__init__(str(self))

    def __str__(self) -> str:
        if self.remedy:
            return f"{self.problem}. Fix: {self.remedy}."
        return f"{self.problem}."

    def to_dict(self) -> dict[str, str]:
        """Return a JSON-friendly form (used by ``--json`` error output)."""
        return {"error": type(self).__name__, "problem": self.problem, "remedy": self.remedy}


class InputError(WorkbenchError):
    """Input given by the user cannot be used as it is."""

    exit_code = 2


class FileFormatError(InputError):
    """A file is empty, truncated, in an unknown format or badly encoded."""


class ColumnMappingError(InputError):
    """Required columns are missing or cannot be told apart."""


class UnitError(InputError):
    """A unit is missing, unknown, or disagrees with the values."""


class ValueRangeError(InputError):
    """A value is NaN, infinite, non-positive, unordered or otherwise out of its domain."""


class PhysicsError(WorkbenchError):
    """A physical calculation cannot be carried out as requested."""

    exit_code = 2


class OutOfRangeError(PhysicsError):
    """A formula was asked for outside the range where it is valid."""


class InsufficientDataError(PhysicsError):
    """Too few data (lines, replicates, energy span) for a sound estimate."""


class ReferenceDataError(WorkbenchError):
    """The reference collection cannot be used."""

    exit_code = 3


class ManifestError(ReferenceDataError):
    """The reference manifest is missing, malformed or incomplete."""


class DataIntegrityError(ReferenceDataError):
    """A reference data file does not match the SHA-256 in the manifest."""


class UnknownReferenceSetError(ReferenceDataError):
    """No reference set has the requested id."""


class LabSetValidationError(ReferenceDataError):
    """A lab line-set CSV failed validation.

    Parameters
    ----------
    problems : list of str
        Every problem found, each naming its row number and column.
    source : str
        Name of the file that was checked.
    """

    def __init__(self, problems: list[str], source: str) -> None:
        self.problems = list(problems)
        shown = "; ".join(self.problems[:20])
        more = f" (and {len(self.problems) - 20} more)" if len(self.problems) > 20 else ""
        super().__init__(
            f"{source}: {len(self.problems)} problem(s): {shown}{more}",
            "correct the listed rows and import the file again; nothing was imported",
        )


class CaseFileError(WorkbenchError):
    """The case store refused an operation."""

    exit_code = 5


class NotFoundError(CaseFileError):
    """No record with the given identifier exists."""

    exit_code = 6


class CustodyRuleError(CaseFileError):
    """A chain-of-custody event breaks a custody rule; nothing was written."""


class StoreIntegrityError(CaseFileError):
    """Tampering or corruption was detected in the case store."""

    exit_code = 4


class BundleError(CaseFileError):
    """A case bundle is malformed or fails verification; nothing was imported."""

    exit_code = 4


class SigningError(WorkbenchError):
    """Key handling or signature verification failed."""

    exit_code = 4


class KeyFileError(SigningError):
    """A key file cannot be read, or its passphrase is wrong."""


class SignatureInvalidError(SigningError):
    """A signature does not verify; the message says which check failed."""


class ComparisonError(WorkbenchError):
    """A questioned-vs-known comparison cannot be done as requested."""

    exit_code = 2
