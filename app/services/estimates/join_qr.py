"""The QR code on the room view: the join address, drawn by segno (PyPI), as SVG."""

import io

import segno


def qr_svg(address: str) -> bytes:
    """An SVG QR code of `address` (error correction M, four modules of quiet zone)."""
    code = segno.make(address, error="m", micro=False)
    out = io.BytesIO()
    code.save(out, kind="svg", xmldecl=False, scale=6, border=4, dark="#000", light="#fff",
              title="Join address")
    return out.getvalue()
