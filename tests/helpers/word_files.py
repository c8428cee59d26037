"""Word files built in the tests, from XML written here (no binary is kept in the repository).

:func:`docx_bytes` writes a complete .docx the way a word processor lays one
out (ECMA-376 Part 1 and Part 2): content types, relationships, the main
document, styles (with a paragraph style, a character style, a caption style
and a table style of the user's own), a numbered list, a header, a footer
holding a PAGE field, a comment, and document properties. The body is given
as XML built with the small functions below (paragraphs, runs, content
controls around paragraphs or inside a line, tracked changes, comments).

This is test code: it is written independently of narrator.places.package,
so a fill is checked against documents narrator did not make.
"""

from __future__ import annotations

import io
import zipfile
from xml.sax.saxutils import escape, quoteattr

W_NS = "http://schemas.openxmlformats.org/wordprocessingml/2006/main"
R_NS = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
NAMESPACES = (
    f'xmlns:w="{W_NS}" xmlns:r="{R_NS}" '
    'xmlns:w14="http://schemas.microsoft.com/office/word/2010/wordml" '
    'xmlns:mc="http://schemas.openxmlformats.org/markup-compatibility/2006" mc:Ignorable="w14"'
)
DECLARATION = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\r\n'


def run(text: str, *, bold: bool = False, style: str | None = None) -> str:
    props = ""
    if style or bold:
        props = "<w:rPr>" + (f'<w:rStyle w:val="{style}"/>' if style else "") + ("<w:b/>" if bold else "") + "</w:rPr>"
    return f'<w:r w:rsidR="00A1B2C3">{props}<w:t xml:space="preserve">{escape(text)}</w:t></w:r>'


def paragraph(*content: str, style: str | None = None, numbered: bool = False) -> str:
    props = ""
    if style or numbered:
        props = ("<w:pPr>" + (f'<w:pStyle w:val="{style}"/>' if style else "")
                 + ('<w:numPr><w:ilvl w:val="0"/><w:numId w:val="1"/></w:numPr>' if numbered else "") + "</w:pPr>")
    body = "".join(item if item.startswith("<") else run(item) for item in content)
    return f'<w:p w:rsidR="00A1B2C3" w:rsidRDefault="00A1B2C3">{props}{body}</w:p>'


def _properties(tag: str | None, control_id: int, alias: str | None, placeholder: bool, extra: str) -> str:
    parts = [f"<w:alias w:val={quoteattr(alias)}/>" if alias else "",
             f"<w:tag w:val={quoteattr(tag)}/>" if tag is not None else "",
             f'<w:id w:val="{control_id}"/>', "<w:showingPlcHdr/>" if placeholder else "", extra]
    return "<w:sdtPr>" + "".join(parts) + "</w:sdtPr>"


def inline_control(tag: str | None, text: str, *, control_id: int, alias: str | None = None,
                   placeholder: bool = False, style: str | None = None, extra: str = "") -> str:
    """A content control inside a line of text (run level)."""
    shown = run(text, style="PlaceholderText" if placeholder else style)
    properties = _properties(tag, control_id, alias, placeholder, extra)
    return f"<w:sdt>{properties}<w:sdtContent>{shown}</w:sdtContent></w:sdt>"


def block_control(tag: str | None, *paragraphs: str, control_id: int, alias: str | None = None,
                  placeholder: bool = False, extra: str = "") -> str:
    """A content control around whole paragraphs (block level)."""
    return (f"<w:sdt>{_properties(tag, control_id, alias, placeholder, extra)}<w:sdtContent>"
            + "".join(paragraphs) + "</w:sdtContent></w:sdt>")


def inserted(text: str) -> str:
    return f'<w:ins w:id="901" w:author="Reviewer" w:date="2026-10-02T10:00:00Z">{run(text)}</w:ins>'


def deleted(text: str) -> str:
    return (f'<w:del w:id="902" w:author="Reviewer" w:date="2026-10-02T10:00:00Z"><w:r>'
            f'<w:delText xml:space="preserve">{escape(text)}</w:delText></w:r></w:del>')


def commented(text: str, comment_id: int = 0) -> str:
    return (f'<w:commentRangeStart w:id="{comment_id}"/>{run(text)}<w:commentRangeEnd w:id="{comment_id}"/>'
            f'<w:r><w:rPr><w:rStyle w:val="CommentReference"/></w:rPr><w:commentReference w:id="{comment_id}"/></w:r>')


def page_field() -> str:
    return ('<w:r><w:fldChar w:fldCharType="begin"/></w:r><w:r><w:instrText xml:space="preserve"> PAGE </w:instrText>'
            '</w:r><w:r><w:fldChar w:fldCharType="separate"/></w:r><w:r><w:t>1</w:t></w:r>'
            '<w:r><w:fldChar w:fldCharType="end"/></w:r>')


STYLES = f"""{DECLARATION}<w:styles {NAMESPACES}>
<w:docDefaults><w:rPrDefault><w:rPr><w:rFonts w:ascii="Liberation Serif" w:hAnsi="Liberation Serif"/>
<w:sz w:val="22"/><w:lang w:val="en-US"/></w:rPr></w:rPrDefault><w:pPrDefault><w:pPr>
<w:spacing w:after="120"/></w:pPr></w:pPrDefault></w:docDefaults>
<w:style w:type="paragraph" w:default="1" w:styleId="Normal"><w:name w:val="Normal"/><w:qFormat/></w:style>
<w:style w:type="paragraph" w:styleId="Heading1"><w:name w:val="heading 1"/><w:basedOn w:val="Normal"/>
<w:next w:val="Normal"/><w:pPr><w:keepNext/><w:spacing w:before="240"/><w:outlineLvl w:val="0"/></w:pPr>
<w:rPr><w:b/><w:sz w:val="32"/></w:rPr></w:style>
<w:style w:type="paragraph" w:customStyle="1" w:styleId="QuarterlyBody"><w:name w:val="Quarterly Body"/>
<w:basedOn w:val="Normal"/><w:pPr><w:ind w:left="284"/></w:pPr><w:rPr><w:color w:val="1F3864"/></w:rPr></w:style>
<w:style w:type="paragraph" w:styleId="Caption"><w:name w:val="caption"/><w:basedOn w:val="Normal"/>
<w:rPr><w:i/><w:sz w:val="18"/></w:rPr></w:style>
<w:style w:type="paragraph" w:styleId="ListParagraph"><w:name w:val="List Paragraph"/><w:basedOn w:val="Normal"/>
<w:pPr><w:ind w:left="720"/></w:pPr></w:style>
<w:style w:type="character" w:customStyle="1" w:styleId="Figure"><w:name w:val="Figure Number"/>
<w:rPr><w:b/><w:color w:val="C00000"/></w:rPr></w:style>
<w:style w:type="character" w:styleId="PlaceholderText"><w:name w:val="Placeholder Text"/>
<w:rPr><w:color w:val="808080"/></w:rPr></w:style>
<w:style w:type="character" w:styleId="CommentReference"><w:name w:val="annotation reference"/>
<w:rPr><w:sz w:val="16"/></w:rPr></w:style>
<w:style w:type="table" w:styleId="TableGrid"><w:name w:val="Table Grid"/><w:tblPr><w:tblBorders>
<w:top w:val="single" w:sz="4" w:space="0" w:color="auto"/>
<w:left w:val="single" w:sz="4" w:space="0" w:color="auto"/>
<w:bottom w:val="single" w:sz="4" w:space="0" w:color="auto"/>
<w:right w:val="single" w:sz="4" w:space="0" w:color="auto"/>
<w:insideH w:val="single" w:sz="4" w:space="0" w:color="auto"/>
<w:insideV w:val="single" w:sz="4" w:space="0" w:color="auto"/>
</w:tblBorders></w:tblPr></w:style>
</w:styles>"""

NUMBERING = f"""{DECLARATION}<w:numbering {NAMESPACES}><w:abstractNum w:abstractNumId="0"><w:lvl w:ilvl="0">
<w:start w:val="1"/><w:numFmt w:val="decimal"/><w:lvlText w:val="%1."/><w:lvlJc w:val="left"/>
<w:pPr><w:ind w:left="720" w:hanging="360"/></w:pPr></w:lvl></w:abstractNum>
<w:num w:numId="1"><w:abstractNumId w:val="0"/></w:num></w:numbering>"""

SETTINGS = f"""{DECLARATION}<w:settings {NAMESPACES}><w:zoom w:percent="100"/><w:trackRevisions/>
<w:defaultTabStop w:val="720"/><w:compat><w:compatSetting w:name="compatibilityMode"
w:uri="http://schemas.microsoft.com/office/word" w:val="15"/></w:compat></w:settings>"""

COMMENTS = f"""{DECLARATION}<w:comments {NAMESPACES}>
<w:comment w:id="0" w:author="Reviewer" w:date="2026-10-02T10:00:00Z" w:initials="RV">
<w:p><w:r><w:t>Please check this figure against the ledger.</w:t></w:r></w:p></w:comment></w:comments>"""


def header_xml(*content: str) -> str:
    return f"{DECLARATION}<w:hdr {NAMESPACES}>" + "".join(content) + "</w:hdr>"


def footer_xml(*content: str) -> str:
    return f"{DECLARATION}<w:ftr {NAMESPACES}>" + "".join(content) + "</w:ftr>"


def docx_bytes(body: str, *, header: str | None = None, footer: str | None = None,
               header_rels: str | None = None) -> bytes:
    """A complete .docx around ``body`` (the XML inside w:body, before the section properties)."""
    header = header or header_xml(paragraph("Invented Water Board - quarterly figures (test document)"))
    footer = footer or footer_xml(paragraph("Page ", page_field()))
    document = (f'{DECLARATION}<w:document {NAMESPACES}><w:body>{body}'
                '<w:sectPr><w:headerReference w:type="default" r:id="rId4"/>'
                '<w:footerReference w:type="default" r:id="rId5"/>'
                '<w:pgSz w:w="12240" w:h="15840"/><w:pgMar w:top="1440" w:right="1440" w:bottom="1440" '
                'w:left="1440" w:header="720" w:footer="720" w:gutter="0"/></w:sectPr></w:body></w:document>')
    rels = (f'{DECLARATION}<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
            f'<Relationship Id="rId1" Type="{R_NS}/styles" Target="styles.xml"/>'
            f'<Relationship Id="rId2" Type="{R_NS}/numbering" Target="numbering.xml"/>'
            f'<Relationship Id="rId3" Type="{R_NS}/settings" Target="settings.xml"/>'
            f'<Relationship Id="rId4" Type="{R_NS}/header" Target="header1.xml"/>'
            f'<Relationship Id="rId5" Type="{R_NS}/footer" Target="footer1.xml"/>'
            f'<Relationship Id="rId6" Type="{R_NS}/comments" Target="comments.xml"/>'
            '</Relationships>')
    main = "application/vnd.openxmlformats-officedocument.wordprocessingml"
    types = (f'{DECLARATION}<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
             '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
             '<Default Extension="xml" ContentType="application/xml"/>'
             f'<Override PartName="/word/document.xml" ContentType="{main}.document.main+xml"/>'
             f'<Override PartName="/word/styles.xml" ContentType="{main}.styles+xml"/>'
             f'<Override PartName="/word/numbering.xml" ContentType="{main}.numbering+xml"/>'
             f'<Override PartName="/word/settings.xml" ContentType="{main}.settings+xml"/>'
             f'<Override PartName="/word/header1.xml" ContentType="{main}.header+xml"/>'
             f'<Override PartName="/word/footer1.xml" ContentType="{main}.footer+xml"/>'
             f'<Override PartName="/word/comments.xml" ContentType="{main}.comments+xml"/>'
             '<Override PartName="/docProps/core.xml" '
             'ContentType="application/vnd.openxmlformats-package.core-properties+xml"/>'
             '</Types>')
    package_rels = (f'{DECLARATION}<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
                    f'<Relationship Id="rId1" Type="{R_NS}/officeDocument" Target="word/document.xml"/>'
                    '<Relationship Id="rId2" Type="http://schemas.openxmlformats.org/package/2006/relationships/'
                    'metadata/core-properties" Target="docProps/core.xml"/></Relationships>')
    core = (f'{DECLARATION}<cp:coreProperties xmlns:cp="http://schemas.openxmlformats.org/package/2006/metadata/'
            'core-properties" xmlns:dc="http://purl.org/dc/elements/1.1/" xmlns:dcterms="http://purl.org/dc/terms/" '
            'xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance"><dc:title>Quarterly figures</dc:title>'
            '<dc:creator>Test Analyst</dc:creator><dcterms:modified xsi:type="dcterms:W3CDTF">2026-10-01T08:00:00Z'
            '</dcterms:modified></cp:coreProperties>')
    members = {
        "[Content_Types].xml": types,
        "_rels/.rels": package_rels,
        "word/document.xml": document,
        "word/_rels/document.xml.rels": rels,
        "word/styles.xml": STYLES,
        "word/numbering.xml": NUMBERING,
        "word/settings.xml": SETTINGS,
        "word/header1.xml": header,
        "word/footer1.xml": footer,
        "word/comments.xml": COMMENTS,
        "docProps/core.xml": core,
    }
    if header_rels is not None:
        members["word/_rels/header1.xml.rels"] = header_rels
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, text in members.items():
            archive.writestr(zipfile.ZipInfo(name, date_time=(2026, 10, 1, 8, 0, 0)), text.encode("utf-8"))
    return buffer.getvalue()


def members(data: bytes) -> dict[str, bytes]:
    with zipfile.ZipFile(io.BytesIO(data)) as archive:
        return {name: archive.read(name) for name in archive.namelist()}
