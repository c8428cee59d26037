"""Build templates/styles/narrator-base.docx, the default style base of narrator reports.

Run from the repository root: ``python templates/styles/build_style.py``.
The output is committed; this script is how it was made, so a change of look
is a change here followed by a rebuild (the bytes are reproducible: fixed zip
timestamps, fixed part order).

The package is written part by part as OOXML (ECMA-376) rather than derived
from a word processor's own default file, so it carries only what a report
uses, no foreign application name, theme or thumbnail, and stays a few
kilobytes. python-docx then opens it as a check.

===================  ==========================================================
Style                Use
===================  ==========================================================
Normal               body text: Georgia 10.5 pt, 1.2 line spacing
Title                report title
Report Details       the lines under the title (organisation, data, date)
Heading 1, 2, 3      section titles
List Bullet          bullet paragraphs (numbering definition 1)
Reference            reference list entries, hanging indent
Caption              figure and table captions
Table Text           table cells; Table Heading: header cells
Narrator Table       table style: horizontal rules only
Footer               page footer with the page number
===================  ==========================================================

Fonts: Georgia for text and Verdana for headings, captions and tables are
installed with Windows and macOS; elsewhere a word processor substitutes its
own serif and sans-serif (LibreOffice on Linux: DejaVu Serif and DejaVu Sans,
the latter being the font the figures use). Colours: text near-black; headings
in a dark blue mixed from the Okabe & Ito (2008) blue #0072B2.
"""

from __future__ import annotations

import io
import sys
import zipfile
from pathlib import Path

W_NS = "http://schemas.openxmlformats.org/wordprocessingml/2006/main"
R_NS = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
REL_NS = "http://schemas.openxmlformats.org/package/2006/relationships"
DOC_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"

TEXT_FONT = "Georgia"
HEADING_FONT = "Verdana"
HEADING_COLOUR = "00507D"  # Okabe & Ito blue #0072B2, darkened for text contrast
TEXT_COLOUR = "1A1A1A"
RULE_COLOUR = "5A5A5A"

# A4 with 2.5 cm margins, in twentieths of a point (1 cm = 567 twips).
PAGE_WIDTH, PAGE_HEIGHT, MARGIN = 11906, 16838, 1418

HEAD = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'


def fonts(name: str) -> str:
    return f'<w:rFonts w:ascii="{name}" w:hAnsi="{name}" w:eastAsia="{name}" w:cs="{name}"/>'


def paragraph_style(
    style_id: str, name: str, *, ppr: str = "", rpr: str = "", based_on: str | None = "Normal",
    next_style: str | None = None, default: bool = False, ui_priority: int = 10,
) -> str:
    default_mark = ' w:default="1"' if default else ""
    parts = [
        f'<w:style w:type="paragraph" w:styleId="{style_id}"{default_mark}>',
        f'<w:name w:val="{name}"/>',
    ]
    if based_on:
        parts.append(f'<w:basedOn w:val="{based_on}"/>')
    if next_style:
        parts.append(f'<w:next w:val="{next_style}"/>')
    parts.append(f'<w:uiPriority w:val="{ui_priority}"/><w:qFormat/>')
    if ppr:
        parts.append(f"<w:pPr>{ppr}</w:pPr>")
    if rpr:
        parts.append(f"<w:rPr>{rpr}</w:rPr>")
    parts.append("</w:style>")
    return "".join(parts)


def styles_xml() -> str:
    heading = fonts(HEADING_FONT) + f'<w:color w:val="{HEADING_COLOUR}"/>'
    rule = f'w:val="single" w:sz="6" w:space="0" w:color="{RULE_COLOUR}"'
    thin_rule = f'w:val="single" w:sz="4" w:space="0" w:color="{RULE_COLOUR}"'
    styles = [
        paragraph_style(
            "Normal", "Normal", based_on=None, default=True, ui_priority=0,
            ppr='<w:spacing w:after="140" w:line="288" w:lineRule="auto"/>',
            rpr=fonts(TEXT_FONT) + f'<w:color w:val="{TEXT_COLOUR}"/><w:sz w:val="21"/><w:szCs w:val="21"/>'
            '<w:lang w:val="en-GB"/>',
        ),
        paragraph_style(
            "Title", "Title", next_style="ReportDetails",
            ppr='<w:spacing w:before="0" w:after="120" w:line="240" w:lineRule="auto"/>'
            "<w:contextualSpacing/>",
            rpr=heading + '<w:kern w:val="28"/><w:sz w:val="40"/><w:szCs w:val="40"/>',
        ),
        paragraph_style(
            "ReportDetails", "Report Details",
            ppr='<w:spacing w:before="0" w:after="40"/>',
            rpr=fonts(HEADING_FONT) + '<w:color w:val="4D4D4D"/><w:sz w:val="18"/><w:szCs w:val="18"/>',
        ),
        paragraph_style(
            "Heading1", "heading 1", next_style="Normal", ui_priority=9,
            ppr=f'<w:keepNext/><w:keepLines/><w:pBdr><w:bottom {thin_rule}/></w:pBdr>'
            '<w:spacing w:before="360" w:after="120"/><w:outlineLvl w:val="0"/>',
            rpr=heading + '<w:b/><w:bCs/><w:sz w:val="26"/><w:szCs w:val="26"/>',
        ),
        paragraph_style(
            "Heading2", "heading 2", next_style="Normal", ui_priority=9,
            ppr='<w:keepNext/><w:keepLines/><w:spacing w:before="240" w:after="80"/>'
            '<w:outlineLvl w:val="1"/>',
            rpr=heading + '<w:b/><w:bCs/><w:sz w:val="22"/><w:szCs w:val="22"/>',
        ),
        paragraph_style(
            "Heading3", "heading 3", next_style="Normal", ui_priority=9,
            ppr='<w:keepNext/><w:keepLines/><w:spacing w:before="200" w:after="60"/>'
            '<w:outlineLvl w:val="2"/>',
            rpr=heading + '<w:sz w:val="21"/><w:szCs w:val="21"/>',
        ),
        paragraph_style(
            "ListBullet", "List Bullet",
            ppr='<w:numPr><w:ilvl w:val="0"/><w:numId w:val="1"/></w:numPr>'
            '<w:spacing w:after="80"/><w:ind w:left="357" w:hanging="357"/>',
        ),
        paragraph_style(
            "Reference", "Reference",
            ppr='<w:spacing w:after="80"/><w:ind w:left="454" w:hanging="454"/>',
            rpr='<w:sz w:val="19"/><w:szCs w:val="19"/>',
        ),
        paragraph_style(
            "Caption", "caption", next_style="Normal", ui_priority=35,
            ppr='<w:spacing w:before="60" w:after="240" w:line="252" w:lineRule="auto"/>',
            rpr=fonts(HEADING_FONT) + '<w:color w:val="333333"/><w:sz w:val="17"/><w:szCs w:val="17"/>',
        ),
        paragraph_style(
            "TableText", "Table Text",
            ppr='<w:spacing w:before="30" w:after="30" w:line="240" w:lineRule="auto"/>',
            rpr=fonts(HEADING_FONT) + '<w:sz w:val="17"/><w:szCs w:val="17"/>',
        ),
        paragraph_style(
            "TableHeading", "Table Heading", based_on="TableText",
            ppr='<w:keepNext/>', rpr="<w:b/><w:bCs/>",
        ),
        paragraph_style(
            "Figure", "Figure",
            ppr='<w:keepNext/><w:spacing w:before="120" w:after="0"/><w:jc w:val="center"/>',
        ),
        paragraph_style(
            "Footer", "footer", ui_priority=99,
            ppr='<w:jc w:val="center"/><w:spacing w:after="0"/>',
            rpr=fonts(HEADING_FONT) + '<w:color w:val="666666"/><w:sz w:val="16"/><w:szCs w:val="16"/>',
        ),
        '<w:style w:type="character" w:default="1" w:styleId="DefaultParagraphFont">'
        '<w:name w:val="Default Paragraph Font"/><w:uiPriority w:val="1"/><w:semiHidden/></w:style>',
        '<w:style w:type="table" w:default="1" w:styleId="TableNormal"><w:name w:val="Normal Table"/>'
        '<w:uiPriority w:val="99"/><w:semiHidden/><w:tblPr><w:tblInd w:w="0" w:type="dxa"/>'
        '<w:tblCellMar><w:top w:w="0" w:type="dxa"/><w:left w:w="108" w:type="dxa"/>'
        '<w:bottom w:w="0" w:type="dxa"/><w:right w:w="108" w:type="dxa"/></w:tblCellMar>'
        "</w:tblPr></w:style>",
        # Horizontal rules only: above the table, under the header row, below the table.
        '<w:style w:type="table" w:styleId="NarratorTable"><w:name w:val="Narrator Table"/>'
        '<w:basedOn w:val="TableNormal"/><w:uiPriority w:val="40"/>'
        '<w:pPr><w:spacing w:before="30" w:after="30" w:line="240" w:lineRule="auto"/></w:pPr>'
        f'<w:rPr>{fonts(HEADING_FONT)}<w:sz w:val="17"/><w:szCs w:val="17"/></w:rPr>'
        f'<w:tblPr><w:tblBorders><w:top {rule}/><w:bottom {rule}/>'
        '<w:insideH w:val="single" w:sz="2" w:space="0" w:color="D9D9D9"/></w:tblBorders>'
        '<w:tblCellMar><w:top w:w="28" w:type="dxa"/><w:left w:w="85" w:type="dxa"/>'
        '<w:bottom w:w="28" w:type="dxa"/><w:right w:w="85" w:type="dxa"/></w:tblCellMar></w:tblPr>'
        f'<w:tblStylePr w:type="firstRow"><w:rPr><w:b/><w:bCs/></w:rPr>'
        f'<w:tcPr><w:tcBorders><w:bottom {rule}/></w:tcBorders></w:tcPr></w:tblStylePr>'
        "</w:style>",
    ]
    return (
        HEAD + f'<w:styles xmlns:w="{W_NS}" xmlns:r="{R_NS}">'
        "<w:docDefaults><w:rPrDefault><w:rPr>" + fonts(TEXT_FONT) +
        '<w:sz w:val="21"/><w:szCs w:val="21"/><w:lang w:val="en-GB"/></w:rPr></w:rPrDefault>'
        '<w:pPrDefault><w:pPr><w:spacing w:after="140" w:line="288" w:lineRule="auto"/></w:pPr>'
        "</w:pPrDefault></w:docDefaults>" + "".join(styles) + "</w:styles>"
    )


def numbering_xml() -> str:
    return (
        HEAD + f'<w:numbering xmlns:w="{W_NS}">'
        '<w:abstractNum w:abstractNumId="0"><w:multiLevelType w:val="singleLevel"/>'
        '<w:lvl w:ilvl="0"><w:start w:val="1"/><w:numFmt w:val="bullet"/><w:lvlText w:val="\u2022"/>'
        '<w:lvlJc w:val="left"/><w:pPr><w:ind w:left="357" w:hanging="357"/></w:pPr>'
        f'<w:rPr>{fonts(TEXT_FONT)}<w:color w:val="{HEADING_COLOUR}"/></w:rPr></w:lvl></w:abstractNum>'
        '<w:num w:numId="1"><w:abstractNumId w:val="0"/></w:num></w:numbering>'
    )


def document_xml() -> str:
    return (
        HEAD + f'<w:document xmlns:w="{W_NS}" xmlns:r="{R_NS}"><w:body>'
        f'<w:sectPr><w:footerReference w:type="default" r:id="rIdFooter1"/>'
        f'<w:pgSz w:w="{PAGE_WIDTH}" w:h="{PAGE_HEIGHT}"/>'
        f'<w:pgMar w:top="{MARGIN}" w:right="{MARGIN}" w:bottom="{MARGIN}" w:left="{MARGIN}" '
        'w:header="709" w:footer="567" w:gutter="0"/></w:sectPr></w:body></w:document>'
    )


def footer_xml() -> str:
    # The page number as a PAGE field (ECMA-376 part 1, 17.16.5.41).
    return (
        HEAD + f'<w:ftr xmlns:w="{W_NS}" xmlns:r="{R_NS}"><w:p><w:pPr><w:pStyle w:val="Footer"/></w:pPr>'
        '<w:fldSimple w:instr=" PAGE "><w:r><w:t>1</w:t></w:r></w:fldSimple></w:p></w:ftr>'
    )


def settings_xml() -> str:
    return (
        HEAD + f'<w:settings xmlns:w="{W_NS}"><w:defaultTabStop w:val="709"/>'
        '<w:characterSpacingControl w:val="doNotCompress"/><w:compat>'
        '<w:compatSetting w:name="compatibilityMode" w:uri="http://schemas.microsoft.com/office/word" '
        'w:val="15"/></w:compat></w:settings>'
    )


def content_types_xml() -> str:
    main = "application/vnd.openxmlformats-officedocument.wordprocessingml"
    return (
        HEAD + '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
        '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
        '<Default Extension="xml" ContentType="application/xml"/>'
        '<Default Extension="png" ContentType="image/png"/>'
        f'<Override PartName="/word/document.xml" ContentType="{main}.document.main+xml"/>'
        f'<Override PartName="/word/styles.xml" ContentType="{main}.styles+xml"/>'
        f'<Override PartName="/word/numbering.xml" ContentType="{main}.numbering+xml"/>'
        f'<Override PartName="/word/settings.xml" ContentType="{main}.settings+xml"/>'
        f'<Override PartName="/word/footer1.xml" ContentType="{main}.footer+xml"/>'
        '<Override PartName="/docProps/core.xml" '
        'ContentType="application/vnd.openxmlformats-package.core-properties+xml"/>'
        "</Types>"
    )


def package_rels_xml() -> str:
    return (
        HEAD + f'<Relationships xmlns="{REL_NS}">'
        f'<Relationship Id="rId1" Type="{DOC_REL}/officeDocument" Target="word/document.xml"/>'
        '<Relationship Id="rId2" Type="http://schemas.openxmlformats.org/package/2006/relationships/'
        'metadata/core-properties" Target="docProps/core.xml"/></Relationships>'
    )


def document_rels_xml() -> str:
    return (
        HEAD + f'<Relationships xmlns="{REL_NS}">'
        f'<Relationship Id="rIdStyles" Type="{DOC_REL}/styles" Target="styles.xml"/>'
        f'<Relationship Id="rIdNumbering" Type="{DOC_REL}/numbering" Target="numbering.xml"/>'
        f'<Relationship Id="rIdSettings" Type="{DOC_REL}/settings" Target="settings.xml"/>'
        f'<Relationship Id="rIdFooter1" Type="{DOC_REL}/footer" Target="footer1.xml"/>'
        "</Relationships>"
    )


def core_xml() -> str:
    # Empty on purpose: the writer fills every property from the report's options.
    return (
        HEAD + '<cp:coreProperties xmlns:cp="http://schemas.openxmlformats.org/package/2006/metadata/'
        'core-properties" xmlns:dc="http://purl.org/dc/elements/1.1/" '
        'xmlns:dcterms="http://purl.org/dc/terms/" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">'
        "<dc:title></dc:title></cp:coreProperties>"
    )


PARTS = (
    ("[Content_Types].xml", content_types_xml),
    ("_rels/.rels", package_rels_xml),
    ("word/document.xml", document_xml),
    ("word/_rels/document.xml.rels", document_rels_xml),
    ("word/styles.xml", styles_xml),
    ("word/numbering.xml", numbering_xml),
    ("word/settings.xml", settings_xml),
    ("word/footer1.xml", footer_xml),
    ("docProps/core.xml", core_xml),
)


def build() -> bytes:
    """The style base as .docx bytes (same bytes on every run)."""
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        for name, make in PARTS:
            info = zipfile.ZipInfo(name, date_time=(1980, 1, 1, 0, 0, 0))
            info.compress_type = zipfile.ZIP_DEFLATED
            archive.writestr(info, make().encode("utf-8"))
    return buffer.getvalue()


def check(data: bytes) -> None:
    """Open the result with python-docx and make sure every style the writer uses is there."""
    import docx

    document = docx.Document(io.BytesIO(data))
    names = {style.name for style in document.styles}
    wanted = {
        "Normal", "Title", "Report Details", "Heading 1", "Heading 2", "Heading 3", "List Bullet",
        "Reference", "Caption", "Table Text", "Table Heading", "Narrator Table", "Figure", "Footer",
    }
    missing = wanted - names
    if missing:
        raise SystemExit(f"style base lacks {sorted(missing)}")


def main() -> int:
    target = Path(__file__).with_name("narrator-base.docx")
    data = build()
    check(data)
    target.write_bytes(data)
    print(f"wrote {target} ({len(data)} bytes)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
