"""The caution every report, figure and result file of a design quantity carries."""

CAUTION = ("Simulated currents, program/erase speed, retention and endurance are estimates; "
           "qualification follows the applicable standards (JEDEC JESD47, JESD22-A117, JESD218) "
           "and lab practice, not this tool.")
