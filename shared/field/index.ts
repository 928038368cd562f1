// Field calculations: unit conversions, gauge/absolute pressure, superheat, subcooling, valve position.
export * from './units';
export * from './pressure';
export * from './superheat';
export * from './highSide';
