"""The colours of every figure the tool draws (report, sweep chart, plan figure).

Okabe and Ito (2008), "Color Universal Design": eight colours told apart with the common forms
of colour blindness (common practice, no source).
"""

OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "purple": "#CC79A7",
}
GREY = "#555555"  # secondary lines and labels
LIGHT_GREY = "#BBBBBB"  # background points (candidates)
