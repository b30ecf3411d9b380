"""Element and attribute names of the ADES XML schema, for tests/ades_xml.rs.

Usage: python3 make_names.py general.xsd > schema_names.txt

general.xsd is the schema file of the IAU ADES master repository (xsd/general.xsd, commit
140000d9c4a122496f224c8c8511f045733dcb6e). It is not downloaded here (CI has no route to it); the
committed list was taken from that commit. Standard library only.
"""

import sys
import xml.etree.ElementTree as ET

XSD = "{http://www.w3.org/2001/XMLSchema}"


def names(path):
    seen = []
    for el in ET.parse(path).iter():
        if el.tag in (XSD + "element", XSD + "attribute") and "name" in el.attrib:
            n = el.attrib["name"]
            if n not in seen:
                seen.append(n)
    return seen


if __name__ == "__main__":
    print("# Element and attribute names of the ADES schema: xsd/general.xsd of the IAU ADES master repository,")
    print("# commit 140000d9c4a122496f224c8c8511f045733dcb6e, every <xsd:element name=\"...\"> and <xsd:attribute name=\"...\">")
    print("# in file order (duplicates dropped). Regenerate with tests/reference/ades/make_names.py PATH/TO/general.xsd.")
    for n in names(sys.argv[1]):
        print(n)
