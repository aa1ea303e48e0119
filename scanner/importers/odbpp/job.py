"""An ODB++ job on disk: its matrix, the step to read, its units and its symbols.

The step: the one named, else the only one, else the only one without a
``STEP-REPEAT`` array in its ``stephdr`` (panels repeat the board step), else one called
``pcb``; anything else is an error listing the steps.
"""
from __future__ import annotations

from dataclasses import dataclass, field

from scanner.errors import InputError
from scanner.importers.odbpp.copper import feature_image
from scanner.importers.odbpp.features import parse_features
from scanner.importers.odbpp.matrix import Matrix, read_matrix
from scanner.importers.odbpp.symbols import Symbol, standard_symbol
from scanner.importers.odbpp.text import JobFile, read_structured, units_word

#: user symbols may place other user symbols this deep
MAX_SYMBOL_NESTING = 4


@dataclass
class Job:
    root: JobFile
    matrix: Matrix
    step: str
    units: str | None  # from misc/info, for files without a units line
    name: str

    @property
    def step_dir(self) -> JobFile:
        return self.root.find("steps").find(self.step)

    def layer_file(self, layer: str, file_name: str) -> JobFile:
        return self.step_dir.find("layers").find(layer).find(file_name)

    def step_file(self, *parts: str) -> JobFile:
        src = self.step_dir
        for part in parts:
            src = src.find(part)
        return src


def _is_panel(step_dir: JobFile) -> bool:
    header = step_dir.find("stephdr")
    if not header.path.is_file():
        return False
    return any(block.name == "STEP-REPEAT" for block in read_structured(header, "step header").blocks)


def choose_step(matrix: Matrix, root: JobFile, wanted: str | None) -> str:
    steps = list(matrix.steps)
    if wanted is not None:
        match = [s for s in steps if s.lower() == wanted.lower()]
        if not match:
            raise InputError(f"step {wanted!r} is not in the matrix (steps: {', '.join(steps)})", path=matrix.src.name)
        return match[0]
    if len(steps) == 1:
        return steps[0]
    plain = [s for s in steps if not _is_panel(root.find("steps").find(s))]
    if len(plain) == 1:
        return plain[0]
    named = [s for s in plain if s.lower() == "pcb"]
    if len(named) == 1:
        return named[0]
    raise InputError(f"the job has several board steps ({', '.join(steps)}); name the one to read with --step NAME",
                     path=matrix.src.name)


def open_job(root: JobFile, step: str | None = None) -> Job:
    matrix = read_matrix(root.find("matrix").find("matrix"))
    info_src = root.find("misc").find("info")
    units, name = None, root.path.name
    if info_src.path.is_file():
        info = read_structured(info_src, "job info (misc/info)")
        if info.values.get("UNITS"):
            units = units_word(info.values["UNITS"], info_src, info.value_lines["UNITS"])
        name = info.values.get("JOB_NAME") or name
    chosen = choose_step(matrix, root, step)
    if not root.find("steps").find(chosen).path.is_dir():
        raise InputError(f"step {chosen!r} of the matrix has no folder steps/{chosen.lower()}", path=root.name)
    return Job(root, matrix, chosen, units, name)


@dataclass
class SymbolLibrary:
    """Symbols by name: standard ones from their names, user ones from ``symbols/<name>/features``."""

    job: Job
    _user: dict[str, Symbol] = field(default_factory=dict)
    _loading: list[str] = field(default_factory=list)

    def __call__(self, name: str, size_mm: float, src: JobFile, line: int) -> Symbol:
        try:
            standard = standard_symbol(name, size_mm)
        except ValueError as exc:
            raise InputError(str(exc), path=src.name, line=line) from None
        if standard is not None and not standard.approximate:
            return standard
        user = self._user_symbol(name, src, line)
        if user is not None:
            return user
        if standard is not None:
            return standard
        raise InputError(f"symbol {name!r} is neither a standard ODB++ symbol nor defined under symbols/",
                         path=src.name, line=line)

    def _user_symbol(self, name: str, src: JobFile, line: int) -> Symbol | None:
        key = name.lower()
        if key in self._user:
            return self._user[key]
        features = self.job.root.find("symbols").find(name).find("features")
        if not features.path.is_file():
            return None
        if key in self._loading or len(self._loading) >= MAX_SYMBOL_NESTING:
            raise InputError(f"symbol {name!r} places itself, or symbols nest deeper than {MAX_SYMBOL_NESTING}",
                             path=src.name, line=line)
        self._loading.append(key)
        try:
            table = parse_features(features, self.job.units, self, what="symbol features file")
        finally:
            self._loading.pop()
        self._user[key] = Symbol(name, feature_image(table))
        return self._user[key]
