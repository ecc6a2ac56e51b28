"""The site's pages, in menu order: (path, label, what it is for)."""

NAV = (
    ("/", "Bench", "Choose the fixed resistor for one sensor"),
    ("/designs", "Saved", "Designs saved on this machine, shareable on the LAN"),
    ("/shelf", "Parts", "The parts library: browse, create, import a table"),
    ("/compare", "Compare", "Several parts side by side"),
    ("/accuracy", "Accuracy", "Error budget over the range"),
    ("/firmware", "Firmware", "ADC code to stimulus tables and C headers"),
    ("/trip", "Trip points", "Comparator thresholds with hysteresis"),
)
