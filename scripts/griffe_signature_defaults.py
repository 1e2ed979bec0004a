"""A griffe extension for the documentation site: numpydoc as this project writes it, read right.

- Parameter defaults come from the signature. numpydoc lets several parameters share one
  line (``temperature_c, pressure_kpa : float``) and lists choices in braces
  (``{"cap_n2o", "raise_o2"}``); griffe then gives every name on the line the first one's
  default and takes the first choice for the default, so the API pages would show wrong
  defaults.
- Sphinx roles (``:func:`model.vapour.liquid_used_ml```) become code, and numbered
  references (``.. [1] Dion P. ...``) a list, instead of showing as raw markup.

Configured in mkdocs.yml under the python handler's ``extensions``.
"""

from __future__ import annotations

import re

import griffe

_ROLE = re.compile(r":(?:func|mod|class|meth|attr|data|obj|exc):`~?([^`]+)`")
_CITATION = re.compile(r"(?m)^(\s*)\.\. \[(\d+)\]\s+")


class SignatureDefaults(griffe.Extension):
    """Documented parameter defaults taken from the signature; roles and citations as Markdown."""

    def on_object(self, *, obj: griffe.Object, **kwargs) -> None:
        doc = obj.docstring
        if doc is None or "parsed" in vars(doc):
            return
        doc.value = _CITATION.sub(r"\1- [\2] ", _ROLE.sub(r"`\1`", doc.value))
        if not obj.is_function:
            return
        for section in doc.parsed:
            if section.kind is not griffe.DocstringSectionKind.parameters:
                continue
            for param in section.value:
                if param.name in obj.parameters:
                    param.value = obj.parameters[param.name].default
