"""XMP metadata for the brief: the document information dictionary, restated as XMP.

Archives and document systems read a PDF's metadata from the XMP packet of the
catalog's /Metadata stream (ISO 16684-1; PDF 1.4 section 10.2.2); the older
information dictionary is kept too, and both say the same: title, author,
subject, keywords, creator tool, producer, the dates and the document language.
The packet is written from reportlab's own information dictionary and time
stamp when the file is saved, so the bytes stay reproducible for the same input
and date.
"""

from __future__ import annotations

from xml.sax.saxutils import escape

_PACKET = """<?xpacket begin="\ufeff" id="W5M0MpCehiHzreSzNTczkc9d"?>
<x:xmpmeta xmlns:x="adobe:ns:meta/">
<rdf:RDF xmlns:rdf="http://www.w3.org/1999/02/22-rdf-syntax-ns#">
<rdf:Description rdf:about=""
 xmlns:dc="http://purl.org/dc/elements/1.1/"
 xmlns:xmp="http://ns.adobe.com/xap/1.0/"
 xmlns:pdf="http://ns.adobe.com/pdf/1.3/">
<dc:format>application/pdf</dc:format>
<dc:title><rdf:Alt><rdf:li xml:lang="x-default">{title}</rdf:li></rdf:Alt></dc:title>
<dc:creator><rdf:Seq><rdf:li>{author}</rdf:li></rdf:Seq></dc:creator>
<dc:description><rdf:Alt><rdf:li xml:lang="x-default">{subject}</rdf:li></rdf:Alt></dc:description>
<dc:subject><rdf:Bag>{subjects}</rdf:Bag></dc:subject>
<dc:language><rdf:Bag><rdf:li>{language}</rdf:li></rdf:Bag></dc:language>
<xmp:CreatorTool>{creator}</xmp:CreatorTool>
<xmp:CreateDate>{date}</xmp:CreateDate>
<xmp:ModifyDate>{date}</xmp:ModifyDate>
<xmp:MetadataDate>{date}</xmp:MetadataDate>
<pdf:Producer>{producer}</pdf:Producer>
<pdf:Keywords>{keywords}</pdf:Keywords>
</rdf:Description>
</rdf:RDF>
</x:xmpmeta>
<?xpacket end="w"?>"""


def xmp_packet(info, stamp, language: str) -> str:
    """The XMP packet stating what the information dictionary states.

    Parameters
    ----------
    info : reportlab.pdfbase.pdfdoc.PDFInfo
        The document's information dictionary (title, author, subject,
        keywords, creator, producer).
    stamp : reportlab.pdfbase.pdfdoc.TimeStamp
        The document's time stamp, the one its /CreationDate and /ModDate use.
    language : str
        The document language (the catalog's /Lang), e.g. ``en-GB``.

    Returns
    -------
    str
        The packet (UTF-8 text).
    """
    y, mo, d, h, mi, s = stamp.YMDhms
    sign = "-" if stamp.dhh < 0 or (stamp.dhh == 0 and stamp.dmm < 0) else "+"
    date = (f"{y:04d}-{mo:02d}-{d:02d}T{h:02d}:{mi:02d}:{s:02d}"
            f"{sign}{abs(stamp.dhh):02d}:{abs(stamp.dmm):02d}")
    subjects = "".join(f"<rdf:li>{escape(k.strip())}</rdf:li>"
                       for k in str(info.keywords).split(";") if k.strip())
    return _PACKET.format(title=escape(str(info.title)), author=escape(str(info.author)),
                          subject=escape(str(info.subject)), subjects=subjects,
                          language=escape(language), creator=escape(str(info.creator)),
                          date=date, producer=escape(str(info.producer)),
                          keywords=escape(str(info.keywords)))


def attach_xmp(canvas, language: str) -> None:
    """Give the canvas's document a /Metadata stream (uncompressed, as archives expect)
    built from its information dictionary when the file is written."""
    from reportlab.pdfbase.pdfdoc import PDFDictionary, PDFName, PDFStream

    class _Metadata(PDFStream):
        def format(self, document):
            self.content = xmp_packet(document.info, document._timeStamp,
                                      language).encode("utf-8")
            # metadata stays readable without decoding: no compression filter
            saved = document.defaultStreamFilters
            document.defaultStreamFilters = None
            try:
                return PDFStream.format(self, document)
            finally:
                document.defaultStreamFilters = saved

    canvas._doc.Catalog.Metadata = _Metadata(PDFDictionary(
        {"Type": PDFName("Metadata"), "Subtype": PDFName("XML")}))
