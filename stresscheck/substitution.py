"""Part substitution: put another part at one or more designators of a loaded design.

A substitution never copies stresses: the design is rebuilt with the new part in place, so
its own electrical values (R_DS(on), ESR, inductance, capacitance, forward drop...) change
the stresses it causes and those of its neighbours when the design is evaluated again.

Swapping one ref of a multi-ref ``[[components]]`` entry splits that entry into runs of
consecutive refs, so the order of positions (which switch is in which leg) is kept.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

from . import schema
from .errors import InputError
from .parts import Part, PartLibrary


@dataclass(frozen=True)
class Substitution:
    """One ref given another part; ``source`` says who asked (for messages and reports)."""

    ref: str
    part_id: str
    source: str  # "--swap" or the BOM file path
    key: str  # the option or "row N, column 'part'" that named it


def library_for(design, parts_dirs) -> PartLibrary:
    """The parts library a design resolves its parts in (same search order as loading)."""
    from .design import part_folders
    return PartLibrary(part_folders(design.path, parts_dirs))


def apply(design, substitutions, library: PartLibrary):
    """A copy of ``design`` with each substitution's part at its ref.

    Returns
    -------
    (Design, list[dict])
        The new design and one record per ref whose part changed:
        ``{"ref", "before", "after", "source"}`` (refs whose part stays the same are left out).

    Raises
    ------
    InputError
        A ref that is not in the design, a part that is not in the library, or a part whose
        kind does not fit the ref's role; the message names the option or BOM row.
    """
    wanted: dict[str, tuple[Part, Substitution]] = {}
    refs_in_design = {ref for comp in design.components for ref in comp.refs}
    for sub in substitutions:
        if sub.ref not in refs_in_design:
            raise InputError(sub.source, sub.key, f"ref '{sub.ref}' is not in the design "
                             f"{design.path}")
        part = library.get(sub.part_id, sub.source, sub.key)
        wanted[sub.ref] = (part, sub)

    components, changes = [], []
    for comp in design.components:
        runs: list[tuple[Part, list[str]]] = []
        for ref in comp.refs:
            part, sub = wanted.get(ref, (comp.part, None))
            if sub is not None:
                if part.kind not in schema.ROLE_KINDS[comp.role]:
                    raise InputError(sub.source, sub.key, f"part '{part.id}' is a "
                                     f"{part.kind}; ref '{ref}' has role '{comp.role}', "
                                     "which takes " + " or ".join(schema.ROLE_KINDS[comp.role]))
                if part.id != comp.part.id:
                    changes.append({"ref": ref, "before": comp.part.id, "after": part.id,
                                    "source": sub.source})
            if runs and runs[-1][0].id == part.id:
                runs[-1][1].append(ref)
            else:
                runs.append((part, [ref]))
        for part, refs in runs:
            components.append(dataclasses.replace(comp, refs=refs, part=part))
    new = dataclasses.replace(design, components=components)
    try:
        _validate_layout(new)
    except InputError as exc:
        first = next(iter(wanted.values()))[1]
        raise InputError(first.source, first.key, "the design with this substitution "
                         f"cannot be checked: {exc.detail} (a bank of identical parts "
                         "takes one part for all its refs: substitute every ref of it)"
                         ) from None
    return new, changes


def _validate_layout(design) -> None:
    from .topologies import layout_for
    layout_for(design).validate(design)
