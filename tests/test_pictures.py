"""Layer pictures: every PNG/JPEG colour mode read right, animations and pixel bombs refused."""

import struct
import subprocess
import sys
import zlib

import numpy as np
import pytest
from cloakview.optics.errors import InputError
from cloakview.render.color import srgb_to_linear
from cloakview.render.scene.pictures import read_texture
from PIL import Image


def _read(path):
    return read_texture(path, "layer[0].image", "scene.toml")


def _linear(value_8bit):
    # sRGB decoding, IEC 61966-2-1 (checked against the standard's values in test_render.py)
    return float(srgb_to_linear(np.float32(value_8bit / 255.0)))


def test_grey_with_alpha_is_grey_not_yellow(tmp_path):
    # An opaque grey 128 layer saved as 8-bit grey + alpha (PNG colour type 4).
    Image.new("LA", (8, 4), (128, 255)).save(tmp_path / "g.png")
    texture = _read(tmp_path / "g.png")
    assert texture.shape == (4, 8, 4)
    np.testing.assert_allclose(texture[0, 0], [_linear(128)] * 3 + [1.0], rtol=1e-6)


def test_grey_and_one_bit_and_sixteen_bit_grey(tmp_path):
    Image.new("L", (4, 4), 200).save(tmp_path / "l.png")
    np.testing.assert_allclose(_read(tmp_path / "l.png")[1, 1],
                               [_linear(200)] * 3 + [1.0], rtol=1e-6)
    Image.new("1", (4, 4), 1).save(tmp_path / "b.png")
    np.testing.assert_allclose(_read(tmp_path / "b.png")[2, 2], [1, 1, 1, 1], rtol=1e-6)
    Image.fromarray(np.full((4, 4), 65535, np.uint16)).save(tmp_path / "w.png")
    np.testing.assert_allclose(_read(tmp_path / "w.png")[0, 3], [1, 1, 1, 1], rtol=1e-6)


def test_palette_transparency_becomes_alpha(tmp_path):
    image = Image.new("P", (4, 2), 0)
    image.putpalette([255, 0, 0, 0, 0, 255] + [0] * 762)
    image.putpixel((1, 0), 1)
    image.save(tmp_path / "p.png", transparency=0)
    texture = _read(tmp_path / "p.png")
    assert texture[0, 0, 3] == 0.0  # the transparent index
    np.testing.assert_allclose(texture[0, 1], [0, 0, 1, 1], atol=1e-6)


def test_cmyk_jpeg_is_converted_not_read_as_alpha(tmp_path):
    Image.new("CMYK", (8, 8), (0, 0, 0, 0)).save(tmp_path / "c.jpg", quality=95)
    texture = _read(tmp_path / "c.jpg")
    assert np.all(texture[..., 3] == 1.0)  # opaque: K is ink, not transparency
    assert texture[..., :3].min() > 0.9  # no ink is white paper


@pytest.mark.parametrize("extension", ["gif", "png"])
def test_animated_pictures_are_refused(tmp_path, extension):
    frames = [Image.new("RGB", (8, 8), c) for c in ("red", "blue")]
    frames[0].save(tmp_path / f"a.{extension}", save_all=True, append_images=frames[1:])
    with pytest.raises(InputError, match="animated image"):
        _read(tmp_path / f"a.{extension}")


def test_corrupt_and_unknown_files_are_one_clean_line(tmp_path):
    good = tmp_path / "good.png"
    Image.new("RGB", (32, 32), "red").save(good)
    (tmp_path / "cut.png").write_bytes(good.read_bytes()[:60])
    (tmp_path / "text.png").write_text("not a picture")
    for name in ("cut.png", "text.png"):
        with pytest.raises(InputError, match="cannot read this image") as error:
            _read(tmp_path / name)
        assert "\n" not in str(error.value)


def _bomb(path, side=13000):
    """A PNG that declares side x side 8-bit grey pixels, in about 160 KB (all zeros)."""
    def chunk(kind, data):
        return (struct.pack(">I", len(data)) + kind + data
                + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF))
    packer = zlib.compressobj(9)
    row = b"\0" * (side + 1)
    body = b"".join(packer.compress(row) for _ in range(side)) + packer.flush()
    path.write_bytes(b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", struct.pack(
        ">IIBBBBB", side, side, 8, 0, 0, 0, 0)) + chunk(b"IDAT", body) + chunk(b"IEND", b""))


def test_a_small_file_declaring_a_huge_picture_is_refused_in_little_memory(tmp_path):
    _bomb(tmp_path / "bomb.png")
    assert (tmp_path / "bomb.png").stat().st_size < 400_000
    probe = ("import resource, sys, time\n"
             "from cloakview.render.scene.pictures import read_texture\n"
             "from cloakview.optics.errors import InputError\n"
             "base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss\n"
             "start = time.perf_counter()\n"
             "try:\n"
             f"    read_texture(__import__('pathlib').Path({str(tmp_path / 'bomb.png')!r}),"
             " 'k', 's')\n"
             "except InputError as error:\n"
             "    print(time.perf_counter() - start, "
             "resource.getrusage(resource.RUSAGE_SELF).ru_maxrss - base, error)\n")
    out = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True,
                         check=True).stdout.split(maxsplit=2)
    # out[0]: seconds, for the eye (no timed test); out[1]: growth of the peak resident
    # memory over the imports [kB on Linux]. Decoding the picture would take 169 MB or more.
    growth_kb, message = int(out[1]), out[2]
    assert "13000x13000 pixels" in message
    assert growth_kb < 50_000
