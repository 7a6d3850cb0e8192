/**
 * The report's colours. Series colours come from the Okabe-Ito palette (Okabe & Ito 2008, "Color
 * Universal Design", a qualitative palette chosen to stay distinguishable under protanopia,
 * deuteranopia and tritanopia; hex values from memory of the published table). Roles never rely on
 * colour alone: the designer curve is solid, the intent curve dashed, alerts are labelled rules.
 * The probability-of-improvement matrix uses a diverging blue-white-orange ramp built from the same
 * two palette colours, so 0.5 (no preference) is white.
 */
export const OKABE_ITO = {
  black: "#000000",
  orange: "#E69F00",
  skyBlue: "#56B4E9",
  bluishGreen: "#009E73",
  yellow: "#F0E442",
  blue: "#0072B2",
  vermillion: "#D55E00",
  reddishPurple: "#CC79A7",
} as const;

/** What each colour means in a report. */
export const ROLE = {
  designer: OKABE_ITO.blue,
  intent: OKABE_ITO.orange,
  alert: OKABE_ITO.vermillion,
  aligned: OKABE_ITO.bluishGreen,
  inconclusive: "#6B6B6B",
  decoupled: OKABE_ITO.vermillion,
  ink: "#1d2433",
  muted: "#5b6475",
  grid: "#e3e6ec",
} as const;

/** Category order for nominal series beyond designer / intent (small multiples, variants). */
export const SERIES = [OKABE_ITO.blue, OKABE_ITO.orange, OKABE_ITO.bluishGreen, OKABE_ITO.reddishPurple, OKABE_ITO.skyBlue, OKABE_ITO.vermillion, OKABE_ITO.yellow, OKABE_ITO.black];

/** Diverging ramp for probabilities: 0 -> orange (column better), 0.5 -> white, 1 -> blue (row better). */
export const DIVERGING = [OKABE_ITO.orange, "#ffffff", OKABE_ITO.blue];
