"""File mappings for the corpus folders that hold more than one board (shared by the
discovery and inspect tests): without one, discovery gives the clear ambiguity error."""

CORPUS_MAPPINGS = {
    "diptrace": {"mainboard_Top.gbr": "copper:1", "mainboard_Bottom.gbr": "copper:2",
                 "mainboard_BoardOutline.gbr": "outline", "mainboard.drl": "drill"},
    "geda": {"driver.top.gbr": "copper:1", "driver.bottom.gbr": "copper:2",
             "driver.plated-drill.cnc": "drill:plated", "driver.unplated-drill.cnc": "drill:nonplated"},
}
