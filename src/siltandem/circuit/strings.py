"""Layer stacks of several strings: each string's layers recognised as a device of its own.

The layers of string k (stack/strings.py) are recognised alone (circuit/recognise.py): its subcells,
tunnel junctions and isotype interfaces, with its own polarity (one string may be n-on-p and the
next p-on-n: they share no current). The boundary between two strings joins nothing electrically
(a bond, an insulating glue or an air gap in the device); light crosses it as any other boundary.
"""
from dataclasses import dataclass, replace

from siltandem.circuit.recognise import Structure, recognise
from siltandem.numerics.memo import remembered
from siltandem.stack.layers import Layer

#: the Layer fields recognition reads (circuit/recognise.py and :func:`recognise_strings`; ``label``
#: is made of index and name): a stack's structure is a pure function of them and the threshold
RECOGNITION_FIELDS = ("index", "name", "material", "composition", "polarity", "doping_cm3",
                      "diffusion_length_um", "lifetime_ns", "srh_lifetime_ns", "string")


@dataclass(frozen=True)
class RecognitionLayer:
    """A layer as recognition sees it: the :data:`RECOGNITION_FIELDS` of a Layer, nothing else (a
    rule that read another field would fail on it, not silently reuse a structure)."""

    index: int
    name: str
    material: str
    composition: float | None
    polarity: str
    doping_cm3: float
    diffusion_length_um: float | None
    lifetime_ns: float | None
    srh_lifetime_ns: float | None
    string: int

    label = Layer.label


def recognition_key(layers):
    """The :data:`RECOGNITION_FIELDS` of every layer: equal keys, equal structures."""
    return tuple(tuple(getattr(layer, name) for name in RECOGNITION_FIELDS) for layer in layers)


def recognised(layers, *, tunnel_doping_cm3, file=None, reuse=None):
    """:func:`recognise_strings` of ``layers``, worked out from their :func:`recognition_key` alone
    (:class:`RecognitionLayer`) and remembered in ``reuse`` (a study's dict) under that key, the
    threshold and the file: the designs of a map whose varied keys recognition does not read
    (a thickness, a gap, a surface velocity...) share one structure, built once. The structure is
    shared: callers read it, never change it. StackErrors are raised again for every design."""
    key = recognition_key(layers)
    return remembered(reuse, "structure", (key, float(tunnel_doping_cm3), str(file)),
                      lambda: recognise_strings([RecognitionLayer(*fields) for fields in key],
                                                tunnel_doping_cm3=tunnel_doping_cm3, file=file))


def _shifted(info, offset, number, polarity):
    """A recognised part's info with layer indices into the whole stack, its string and polarity."""
    out = dict(info, upper=info["upper"] + offset, string=number, polarity=polarity)
    if "cell" in info:
        out["cell"] = replace(info["cell"], emitter=info["cell"].emitter + offset,
                              base=info["cell"].base + offset)
    return out


def recognise_strings(layers, *, tunnel_doping_cm3, file=None):
    """The structure of a layer stack whose layers carry string numbers: every part's info holds
    its ``string`` and its string's ``polarity``; ``Structure.polarity`` is string 1's. One string:
    exactly :func:`recognise`."""
    numbers = sorted({layer.string for layer in layers})
    if numbers == [1]:
        found = recognise(layers, tunnel_doping_cm3=tunnel_doping_cm3, file=file)
        parts = [(kind, dict(info, string=1, polarity=found.polarity)) for kind, info in found.parts]
        return replace(found, parts=parts)
    parts, subcells, active, notes, polarities = [], [], set(), [], []
    for number in numbers:
        offset = next(i for i, layer in enumerate(layers) if layer.string == number)
        own = [layer for layer in layers if layer.string == number]
        found = recognise(own, tunnel_doping_cm3=tunnel_doping_cm3, file=file)
        polarities.append(found.polarity)
        parts += [(kind, _shifted(info, offset, number, found.polarity)) for kind, info in found.parts]
        subcells += [info["cell"] for kind, info in parts[len(parts) - len(found.parts):] if kind == "subcell"]
        active |= {i + offset for i in found.active_layers}
        notes += list(found.notes)
    return Structure(parts, subcells, polarities[0], active, notes)


def device_by_string(elements, rules, device_elements):
    """The elements with each string's ``[device]`` (stack/strings.string_device) applied by
    ``device_elements`` (circuit/from_layers.py) to that string's elements; a string's series
    resistor is named with its number where the stack has several strings."""
    from siltandem.stack.strings import string_device

    numbers = sorted({e.string for e in elements})
    out = []
    for number in numbers:
        own = [e for e in elements if e.string == number]
        device = string_device(rules, number)
        built = device_elements(own, series_ohm_cm2=device["series_ohm_cm2"],
                                shunt_ohm_cm2=device["shunt_ohm_cm2"])
        added = built[len(own):]
        if len(numbers) > 1:
            added = [replace(e, name=f"{e.name}, string {number}", string=number) for e in added]
        out += built[:len(own)] + added
    # optical order: the elements as given, each string's resistor after its last element
    return out


def string_shading(rules, subcell_strings):
    """The layer model's shading: (string 1's ``shading_fraction``, the front grid's; each subcell's
    string; the shading fraction of each string's own grid from string 2 on). One string: the
    last two are empty."""
    from siltandem.stack.strings import string_device

    front = string_device(rules, 1)["shading_fraction"]
    numbers = sorted(set(subcell_strings))
    if numbers == [1]:
        return front, (), ()
    return front, tuple(subcell_strings), tuple(string_device(rules, k)["shading_fraction"]
                                               for k in range(2, max(numbers) + 1))
