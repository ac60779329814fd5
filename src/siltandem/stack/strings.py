"""Layer stacks of several strings (``terminals = 4``, 6, ...): which string each layer belongs to,
and each string's ``[device]`` values.

A layer's ``string = 2`` puts it, and every layer after it that gives no ``string`` of its own, in
string 2 (the layers of one string are consecutive, sun side first; the first layer is in
string 1 unless it says otherwise). Light crosses all the layers (the strings are optically in
series); each string is its own series circuit between its own two terminals.

``[device]`` gives every string's series resistance, shunt and shading; ``[device.2]`` (a table
named by the string's number) replaces some of them for that string:

    [device]
    series_ohm_cm2 = 0.4
    [device.2]
    series_ohm_cm2 = 0.2
"""
from dataclasses import replace

from siltandem.errors import StackError
from siltandem.stack.layers import DEVICE_KEYS, check_device_value
from siltandem.stack.schema import suggest
from siltandem.text import excerpt


def assign_strings(layers, tables, *, terminals, file):
    """The layers with their ``string`` numbers: a layer's own ``string`` key, else the previous
    layer's (string 1 for the first). Refuses a number outside 1..terminals/2, a string that goes
    back up (strings are consecutive, sun side first) and a string with no layer."""
    strings = terminals // 2
    out, current = [], 1
    for layer, table in zip(layers, tables):
        if "string" in table:
            value = table["string"]
            if isinstance(value, bool) or not isinstance(value, int) or not 1 <= value <= strings:
                raise StackError(f"string = {excerpt(value)} is not a string of this stack (terminals = "
                                 f"{terminals} gives strings 1..{strings})", file=file,
                                 where=f"{layer.label}, key string",
                                 fix="give string = 1 for the sun-side pair of terminals, 2 for the next"
                                 + ("" if strings > 1 else ", and set [conditions] terminals = 4 for "
                                                         "two independent strings"))
            if value < current:
                raise StackError(f"string = {value} comes after a layer of string {current}: the layers "
                                 "of one string are consecutive, sun side first", file=file,
                                 where=f"{layer.label}, key string",
                                 fix=f"list the layers of string {value} above those of string {current}")
            current = value
        out.append(replace(layer, string=current))
    found = {layer.string for layer in out}
    missing = [k for k in range(1, strings + 1) if k not in found]
    if missing:
        raise StackError(f"terminals = {terminals} gives {strings} strings, but no layer is in string "
                         + ", ".join(str(k) for k in missing), file=file, where="key conditions.terminals",
                         fix=f"write string = {missing[0]} on the first layer of that string (the layers "
                             "after it follow), or lower terminals")
    return tuple(out)


def parse_string_devices(table, *, terminals, file):
    """``[device.N]`` tables: {string number: {key: value}} of the keys each string replaces
    (validated as ``[device]``'s own)."""
    if not isinstance(table, dict):
        return {}
    strings = terminals // 2
    out = {}
    for key, values in table.items():
        if not (isinstance(values, dict) and key.isdigit()):
            continue
        number = int(key)
        if not 1 <= number <= strings:
            raise StackError(f"[device.{key}] names no string of this stack (terminals = {terminals} gives "
                             f"strings 1..{strings})", file=file, where=f"key device.{key}",
                             fix="name a string by its number, 1 for the sun-side pair of terminals"
                             + ("" if strings > 1 else "; a two-terminal stack gives its values in [device]"))
        own = {}
        for name, value in values.items():
            if name not in DEVICE_KEYS:
                raise StackError(f"unknown key {name!r} in [device.{key}]", file=file,
                                 where=f"key device.{key}.{name}", fix=suggest(name, DEVICE_KEYS)
                                 + "allowed: " + ", ".join(DEVICE_KEYS))
            own[name] = check_device_value(name, value, file=file, where=f"key device.{key}.{name}")
        out[number] = own
    return out


def string_device(rules, number):
    """String ``number``'s ``[device]`` values: ``[device]``'s (``rules``) with ``[device.N]``'s over them."""
    own = rules.get("string_devices", {}).get(number, {})
    return {key: own.get(key, rules.get(key, default)) for key, default in DEVICE_KEYS.items()}
