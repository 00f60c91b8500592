"""Draw Plenum's app icons (our own simple mark: three airflow lines through a frame)."""

from pathlib import Path

from django.core.management.base import BaseCommand
from PIL import Image, ImageDraw

ICON_DIR = Path(__file__).resolve().parents[2] / "static" / "frontend" / "icons"
BACKGROUND = (36, 80, 95)  # deep slate teal, Plenum's own
FOREGROUND = (244, 241, 232)


def draw_icon(size: int, *, maskable: bool) -> Image.Image:
    # A maskable icon keeps its mark inside the central 80 % safe zone and fills the square edge to edge.
    image = Image.new("RGBA", (size, size), (*BACKGROUND, 255) if maskable else (0, 0, 0, 0))
    draw = ImageDraw.Draw(image)
    if not maskable:
        draw.rounded_rectangle([0, 0, size - 1, size - 1], radius=size // 5, fill=BACKGROUND)
    inset = size * (0.28 if maskable else 0.2)
    box = [inset, inset, size - inset, size - inset]
    line = max(2, size // 28)
    draw.rounded_rectangle(box, radius=size // 14, outline=FOREGROUND, width=line)
    span = box[2] - box[0]
    for i, frac in enumerate((0.3, 0.5, 0.7)):
        y = box[1] + span * frac
        left = box[0] - span * 0.12 + (i % 2) * span * 0.08
        right = box[2] + span * 0.12 - ((i + 1) % 2) * span * 0.08
        draw.rounded_rectangle([left, y - line * 0.8, right, y + line * 0.8], radius=line, fill=FOREGROUND)
    return image


class Command(BaseCommand):
    help = "Draw the PWA icons into frontend/static/frontend/icons/."

    def handle(self, *args, **options):
        ICON_DIR.mkdir(parents=True, exist_ok=True)
        for size in (192, 512):
            draw_icon(size, maskable=False).save(ICON_DIR / f"icon-{size}.png", optimize=True)
            draw_icon(size, maskable=True).save(ICON_DIR / f"maskable-{size}.png", optimize=True)
        self.stdout.write(f"icons written to {ICON_DIR}")
