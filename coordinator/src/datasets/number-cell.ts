/** A cell that reads as a number: optional sign, digits with an optional point, optional exponent. */
export const NUMBER_CELL = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;
