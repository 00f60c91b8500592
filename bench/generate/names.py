"""Invented names (places, people, kinds of space) and the run's label codes."""

from __future__ import annotations

import random

PLACE_A = [
    "Alder",
    "Brack",
    "Cormor",
    "Dunmere",
    "Eskholt",
    "Fenwith",
    "Garrow",
    "Hollin",
    "Ivel",
    "Jessop",
    "Kestle",
    "Larch",
    "Marrow",
    "Nettle",
    "Orrin",
    "Pellow",
    "Quenby",
    "Rooke",
    "Sallow",
    "Tarn",
    "Umber",
    "Vantry",
    "Wexley",
    "Yarrow",
]
PLACE_B = ["Court", "Works", "House", "Yard", "Exchange", "Hall", "Quarter", "Gate", "Mews", "Point", "Row"]
FIRST = [
    "Ada",
    "Bram",
    "Cleo",
    "Dov",
    "Edda",
    "Finn",
    "Gala",
    "Hugo",
    "Ilse",
    "Joss",
    "Kira",
    "Lev",
    "Mira",
    "Nils",
    "Orla",
    "Piet",
    "Rhea",
    "Sten",
    "Tova",
    "Ugo",
    "Vera",
    "Wim",
    "Xan",
    "Yule",
    "Zora",
]
LAST = [
    "Ashdown",
    "Birchley",
    "Crane",
    "Dorrit",
    "Elsworth",
    "Fallow",
    "Greave",
    "Hythe",
    "Ingram",
    "Jolliffe",
    "Kemble",
    "Lorrimer",
    "Moss",
    "Norcott",
    "Oakes",
    "Pryor",
    "Quill",
    "Rathbone",
    "Selwyn",
    "Thorne",
]
SPACE_KINDS = ["office", "classroom", "retail", "conference", "lobby", "library"]
LABEL_ALPHABET = "23456789ABCDEFGHJKMNPQRSTUVWXYZ"  # as inventory.models.LABEL_ALPHABET


class LabelCodes:
    """Label codes from the seeded generator, unique across the whole run."""

    def __init__(self, rng: random.Random):
        self.rng = rng
        self.seen: set[str] = set()

    def new(self, prefix: str) -> str:
        while True:
            code = prefix + "".join(self.rng.choice(LABEL_ALPHABET) for _ in range(6))
            if code not in self.seen:
                self.seen.add(code)
                return code
