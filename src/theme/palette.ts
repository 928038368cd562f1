/** Rimehold's own palette: deep slate ink with a glacier-teal accent; status hues are not the usual traffic-light set. */
import type { GlobalThemeOverrides } from 'naive-ui';

export const ink = {
  950: '#0a141a',
  900: '#0e1a22',
  850: '#132430',
  800: '#182c39',
  700: '#22394a',
  500: '#587082',
  300: '#a3b4bf',
  150: '#dce5ea',
  100: '#eaf0f3',
  50: '#f5f8f9',
} as const;

export const glacier = {
  700: '#0b5a5e',
  600: '#0f6f74',
  500: '#138086',
  400: '#2fa3a4',
  300: '#4fc7c0',
  200: '#8ee0da',
} as const;

const fontFamily = 'Roboto, system-ui, -apple-system, "Segoe UI", sans-serif';

export const lightOverrides: GlobalThemeOverrides = {
  common: {
    fontFamily,
    primaryColor: glacier[500],
    primaryColorHover: glacier[400],
    primaryColorPressed: glacier[600],
    primaryColorSuppl: glacier[400],
    infoColor: '#3b6fd1',
    borderRadius: '8px',
    bodyColor: ink[50],
    textColorBase: ink[900],
  },
  Layout: { siderColor: ink[900], headerColor: '#ffffff' },
  // WCAG 2.1 AA (4.5:1) on the tags' 12 % tint: the accent itself reaches only about 4.0:1 there.
  Tag: { textColorPrimary: glacier[700], textColorInfo: '#2c59b0' },
  // Naive's default empty-state text is its "disabled" grey (below 4.5:1); the muted ink reaches about 4.9:1.
  Empty: { textColor: ink[500] },
};

export const darkOverrides: GlobalThemeOverrides = {
  common: {
    fontFamily,
    primaryColor: glacier[300],
    primaryColorHover: glacier[200],
    primaryColorPressed: glacier[400],
    primaryColorSuppl: glacier[200],
    infoColor: '#7aa2f0',
    borderRadius: '8px',
    bodyColor: ink[950],
    cardColor: ink[900],
    modalColor: ink[900],
    popoverColor: ink[850],
  },
  Layout: { siderColor: ink[950], headerColor: ink[900], color: ink[950] },
  // Same reason as in light: the default empty-state grey is below 4.5:1 on the dark surfaces.
  Empty: { textColor: ink[300] },
};

/** Meta theme-color per mode (address bar on phones). */
export const themeColor = { light: ink[900], dark: ink[950] } as const;
