/**
 * The words of the What forms page (forms.ts) for the simulation's warnings, apart from the page so a test can
 * check them against the codes the engine emits without a browser.
 */

/**
 * What the run's warnings mean, in words a researcher reads first; the engine's own message (SI units, its
 * own terms) is kept in a closed "details" under them. Every code the engine emits
 * (server/engine/simulate/index.ts) has words here; a code without words gets GENERIC_WARNING, never the bare code.
 */
export const WARNING_WORDS: Record<string, string> = {
  'step-limit': 'The run stopped at its step limit before the end: what is shown ends early. Fewer points or a shorter duration reach the end.',
  'positivity-repaired': 'The grid is too coarse for the sharpest cluster edges: the field dipped below zero beside them and the missing amount was made up from the rest of the sample. Use more points to trust the cluster edges (this page goes up to 512; the command line goes further).',
  'clusters-under-resolved': 'Some clusters are only one or two grid cells wide: their number and sizes depend on the grid. Use more points before trusting them.',
  'nothing-formed-yet': 'Nothing has formed yet: at the end of the run the sample is still nearly uniform. This does not mean it stays uniform: run longer.',
  'stable-nothing-forms': 'Stable: nothing forms in the sample. If the details say the unevenness grew in the run, that growth is the grid\'s, not the sample\'s.',
  'fastest-mode-unresolved': 'The predicted pattern is finer than this grid can show: use more points.',
  'fastest-mode-coarse': 'The predicted pattern spans only a few grid cells: what forms from it is narrower still. Use more points.',
  'bands-not-read-in-2d': 'Travelling bands are measured only in 1D: run the 1D chamber for their speed and period.',
  'absent-species': 'A species has no particles at this dose (the no-dopant control): the linear prediction is for the species present.',
  'dynamic-chemicals': 'The chemicals evolve in time in this run; the linear prediction beside it assumes they follow the particles at once.',
  'above-close-packing': 'The clusters reached close packing in a space narrower than the grid resolves: use more points.',
  'measured-mode-differs': 'The pattern that grew fastest in the run is not the one the linear prediction names (the details give the linear growth of both); the details say why: two modes too close to tell apart, or a predicted mode the run could not measure.',
  'fuel-runs-out-first': 'The fuel would run out before the end of the run: the model holds the fuel at its starting level, so what is shown after the marked time would not happen in the sample.',
  'no-linear-window': 'The early growth could not be measured from this run: too few trustworthy samples while the unevenness was still small.',
  'linear-modes-1d': 'In 2D the linear prediction is for patterns along one side of the square; a diagonal pattern may grow slightly faster.',
  'unbounded-as-periodic': 'The open chamber is simulated as a box whose opposite edges join (a repeating piece of a larger sample).',
  'chemistry-not-converged': 'The saturating chemistry did not settle in some steps: treat the numbers with care.',
  'settles-first': 'Some particles settle to the floor (or rise to the top) before the end of the run: after that time the picture of the chamber\'s width no longer holds.',
  'gas-first': 'A gas passes its solubility before the end of the run: bubbles may form, which the model does not include.',
  'clusters-at-particle-size': 'The clusters are about as narrow as a few particles, where the continuum model cannot size them: only the share of particles in them is meaningful, not their sizes.',
  'measured-contradicts-linear': 'The growth measured in the run disagrees in sign or strongly with the linear prediction: it comes from the grid or from nonlinear effects, not from the sample\'s early growth.',
};
export const GENERIC_WARNING = 'The run reported a caution this page has no words for yet: read the details below and treat this dose\'s results with care.';
