"""CCSDS OEM in XML: the reader (CCSDS 505.0-B, the NDM/XML schema), parsed with defusedxml."""

from __future__ import annotations

import re

import numpy as np

from contactplan.io.oem_model import *  # noqa: F401,F403 - the shared model and limits
from contactplan.io.oem_model import _HEADER_KEYS, _SV_PLAIN, Reader, _is_float


class XmlReader(Reader):
    """Reads OEM XML text into an :class:`OemFile`."""

    def xml(self, text: str) -> OemFile:
        import xml.etree.ElementTree as ET

        from defusedxml import DefusedXmlException
        from defusedxml.ElementTree import DefusedXMLParser

        start_lines: list = []  # line of each element, in document order

        class Builder(ET.TreeBuilder):
            expat = None

            def start(self, tag, attrs, _append=start_lines.append):
                _append(self.expat.CurrentLineNumber)
                return super().start(tag, attrs)

        builder = Builder()
        parser = DefusedXMLParser(target=builder, forbid_dtd=True)
        builder.expat = parser.parser
        try:
            parser.feed(text)
            root = parser.close()
        except ET.ParseError as exc:
            line = getattr(exc, "position", (None,))[0]
            msg = re.sub(r":\s*line \d+, column \d+$", "", str(exc))
            self.fail(f"not well-formed XML: {msg}", line)
        except DefusedXmlException:
            self.fail("XML with a DTD or entities is refused (not allowed in a CCSDS OEM)", 1)
        except (ValueError, RecursionError) as exc:  # pragma: no cover - expat oddities
            self.fail(f"not well-formed XML: {exc}", None)

        lines_of = dict(zip(root.iter(), start_lines))

        def tag(el):
            return el.tag.rsplit("}", 1)[-1] if isinstance(el.tag, str) else ""

        def line(el):
            return lines_of.get(el)

        def txt(el):
            return (el.text or "").strip()

        if tag(root) != "oem":
            self.fail(f"XML root element is <{tag(root)}>, not <oem>: not a CCSDS OEM", line(root))
        version = self._version(root.attrib.get("version", ""), line(root))
        kids = [c for c in root if isinstance(c.tag, str)]
        heads = [c for c in kids if tag(c) == "header"]
        bodies = [c for c in kids if tag(c) == "body"]
        if len(heads) != 1 or len(bodies) != 1:
            self.fail("<oem> must hold one <header> and one <body>", line(root))
        header = {"CCSDS_OEM_VERS": version}
        comments = []
        for el in heads[0]:
            if not isinstance(el.tag, str):
                continue
            k = tag(el)
            if k == "COMMENT":
                comments.append(txt(el))
            elif k in _HEADER_KEYS - {"CCSDS_OEM_VERS"}:
                header[k] = txt(el)
            else:
                self.fail(f"unknown header element <{k}>", line(el))
        self._check_header(header, line(heads[0]))
        segments = []
        for seg in bodies[0]:
            if not isinstance(seg.tag, str):
                continue
            if tag(seg) != "segment":
                self.fail(f"unexpected <{tag(seg)}> in <body> (expected <segment>)", line(seg))
            metas = [c for c in seg if tag(c) == "metadata"]
            datas = [c for c in seg if tag(c) == "data"]
            if len(metas) != 1 or len(datas) != 1:
                self.fail("<segment> must hold one <metadata> and one <data>", line(seg))
            meta, seg_comments = [], []
            for el in metas[0]:
                if not isinstance(el.tag, str):
                    continue
                if tag(el) == "COMMENT":
                    seg_comments.append(txt(el))
                else:
                    meta.append((tag(el), txt(el), line(el)))
            svs, ncov = [], 0
            for el in datas[0]:
                if el.tag == "stateVector":
                    svs.append(el)
                    continue
                if not isinstance(el.tag, str):
                    continue
                k = tag(el)
                if k == "COMMENT":
                    seg_comments.append(txt(el))
                elif k == "covarianceMatrix":
                    ncov += 1
                elif k == "stateVector":  # namespaced
                    svs.append(el)
                else:
                    self.fail(f"unexpected <{k}> in <data>", line(el))
            if not svs:
                self.fail("segment has no <stateVector>", line(datas[0]))
            data_lines = [lines_of.get(el) or 0 for el in svs]
            values = None
            if all(tuple(c.tag for c in el) in _SV_PLAIN and not any(c.attrib for c in el) for el in svs):
                width = 10 if all(len(sv) == 10 for sv in svs) else 7  # with accelerations on every state
                try:  # the plain layout, read in bulk
                    values = np.column_stack([np.fromiter((float(sv[j].text) for sv in svs), dtype=float,
                                                          count=len(svs)) for j in range(1, width)])
                    epochs = [(sv[0].text or "").strip() for sv in svs]
                except (ValueError, TypeError):
                    values = None
            if values is None:  # element by element, naming the element at fault
                epochs, rows = [], []
                for el in svs:
                    e, vals = self._state_vector(el, tag, txt, line)
                    epochs.append(e)
                    rows.append(vals)
                if all(len(r) == 9 for r in rows):
                    values = np.array(rows, dtype=float)
                else:
                    values = np.array([r[:6] for r in rows], dtype=float)
            segments.append(self._segment(meta, line(metas[0]), seg_comments, np.array(epochs, dtype=str),
                                          values, np.array(data_lines, dtype=np.int64), ncov))
        if not segments:
            self.fail("no <segment> in <body>", line(bodies[0]))
        return self._finish(version, "XML", header, comments, segments)

    def _state_vector(self, el, tag, txt, line):
        names = ("EPOCH", "X", "Y", "Z", "X_DOT", "Y_DOT", "Z_DOT")
        units = {"X": "km", "Y": "km", "Z": "km", "X_DOT": "km/s", "Y_DOT": "km/s", "Z_DOT": "km/s",
                 "X_DDOT": "km/s**2", "Y_DDOT": "km/s**2", "Z_DDOT": "km/s**2"}
        acc = ("X_DDOT", "Y_DDOT", "Z_DDOT")
        got = {}
        for c in el:
            if not isinstance(c.tag, str):
                continue
            k = tag(c)
            if k in got:
                self.fail(f"<{k}> given twice in <stateVector>", line(c))
            if k not in names and k not in ("X_DDOT", "Y_DDOT", "Z_DDOT"):
                self.fail(f"unexpected <{k}> in <stateVector>", line(c))
            u = c.attrib.get("units")
            if u is not None and k in units and u.strip().lower().replace("^", "**") != units[k]:
                self.fail(f"<{k}> in {u!r}; only {units[k]} is read", line(c))
            got[k] = (txt(c), line(c))
        for k in names:
            if k not in got:
                self.fail(f"<stateVector> lacks <{k}>", line(el))
        vals = []
        for k in names[1:] + (acc if all(a in got for a in acc) else ()):
            s, ln = got[k]
            try:
                vals.append(float(s))
            except ValueError:
                self.fail(f"<{k}> is not a number: {s[:30]!r}", ln)
        return got["EPOCH"][0], vals

    # ---------------------------------------------------------- shared
