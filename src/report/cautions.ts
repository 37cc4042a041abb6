/** The cautions the report and the demo print (SPEC section 8), in one place so they cannot drift apart. */
export const CAUTIONS: readonly string[] = [
  'These figures are estimates from historical prices: they describe how the holdings moved, not how they will move.',
  'Nothing here is investment advice or a recommendation to buy, sell or hold.',
  'Parametric VaR and expected shortfall assume normally distributed returns; real returns have fatter tails, so losses beyond these figures are more frequent than the model says.',
  'Historical VaR repeats only what its window saw: a crash older than the window, or one that never happened, is not in it.',
  'A stress result says what one move would do to today\'s holdings; it is not a probability, and the worst past window is no bound on the next one.',
  "Check every figure against the firm's official risk process and the rules that apply to it before acting on it.",
];
