"""A minimal JSON Schema validator for the helmix timing documents.

Debian's python3 here has no `jsonschema` package, so the tests carry their own validator for
the subset of JSON Schema 2020-12 that docs/timings.schema.json uses (JSON Schema Validation
vocabulary, json-schema.org, from memory): type (one or a list), const, enum, required,
properties, additionalProperties (false or a schema), items, minItems, maxItems, minimum,
minLength, dependentRequired, and $ref to "#/$defs/NAME". A keyword it does not know is an
error, so a schema that grows past this subset fails the test instead of passing unchecked.
When `jsonschema` is importable, `validate` uses it as well and both must agree.
"""

import math

KNOWN = {"$schema", "$id", "title", "description", "type", "const", "enum", "required", "properties",
         "additionalProperties", "items", "minItems", "maxItems", "minimum", "minLength",
         "dependentRequired", "$ref", "$defs"}

# JSON types: an integer is a number with no fractional part; booleans are not numbers
# (JSON Schema Validation, section 6.1.1, from memory).
def _is_type(v, t):
    if t == "object":
        return isinstance(v, dict)
    if t == "array":
        return isinstance(v, list)
    if t == "string":
        return isinstance(v, str)
    if t == "boolean":
        return isinstance(v, bool)
    if t == "null":
        return v is None
    if t == "number":
        return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)
    if t == "integer":
        return _is_type(v, "number") and float(v).is_integer()
    raise ValueError(f"unknown type {t}")


def errors(doc, schema, root=None, path="$"):
    """The list of violations of doc against schema (empty when valid)."""
    root = schema if root is None else root
    out = []
    unknown = set(schema) - KNOWN
    if unknown:
        return [f"{path}: validator does not know keyword(s) {sorted(unknown)}"]
    if "$ref" in schema:
        ref = schema["$ref"]
        if not ref.startswith("#/$defs/"):
            return [f"{path}: unsupported $ref {ref}"]
        out += errors(doc, root["$defs"][ref[len("#/$defs/"):]], root, path)
    if "type" in schema:
        types = schema["type"] if isinstance(schema["type"], list) else [schema["type"]]
        if not any(_is_type(doc, t) for t in types):
            return out + [f"{path}: {doc!r:.60} is not of type {types}"]
    if "const" in schema and not (doc == schema["const"] and type(doc) is type(schema["const"])):
        out.append(f"{path}: {doc!r:.60} is not {schema['const']!r}")
    if "enum" in schema and doc not in schema["enum"]:
        out.append(f"{path}: {doc!r:.60} not in {schema['enum']}")
    if "minimum" in schema and _is_type(doc, "number") and doc < schema["minimum"]:
        out.append(f"{path}: {doc} < minimum {schema['minimum']}")
    if "minLength" in schema and isinstance(doc, str) and len(doc) < schema["minLength"]:
        out.append(f"{path}: shorter than {schema['minLength']}")
    if isinstance(doc, dict):
        for k in schema.get("required", []):
            if k not in doc:
                out.append(f"{path}: missing required member {k!r}")
        props = schema.get("properties", {})
        for k, v in doc.items():
            if k in props:
                out += errors(v, props[k], root, f"{path}.{k}")
            elif schema.get("additionalProperties") is False:
                out.append(f"{path}: member {k!r} is not allowed")
            elif isinstance(schema.get("additionalProperties"), dict):
                out += errors(v, schema["additionalProperties"], root, f"{path}.{k}")
        for k, needs in schema.get("dependentRequired", {}).items():
            if k in doc:
                out += [f"{path}: {k!r} needs {n!r}" for n in needs if n not in doc]
    if isinstance(doc, list):
        if "minItems" in schema and len(doc) < schema["minItems"]:
            out.append(f"{path}: fewer than {schema['minItems']} items")
        if "maxItems" in schema and len(doc) > schema["maxItems"]:
            out.append(f"{path}: more than {schema['maxItems']} items")
        if "items" in schema:
            for i, v in enumerate(doc):
                out += errors(v, schema["items"], root, f"{path}[{i}]")
    return out


def validate(doc, schema):
    """Violations from this validator, plus the verdict of `jsonschema` when it is installed."""
    out = errors(doc, schema)
    try:
        import jsonschema  # noqa: F401  (absent on the reference machine)
    except ImportError:
        return out
    v = jsonschema.Draft202012Validator(schema)
    theirs = [e.message for e in v.iter_errors(doc)]
    if bool(theirs) != bool(out):
        out.append(f"jsonschema disagrees: {theirs[:3]}")
    return out
