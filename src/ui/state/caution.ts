/** The screening caution carried by every result view and every export: the engine's one text. */
export { CAUTION } from '../../core/shared/caution.ts';

/** The label added wherever the invented demo data are shown. */
export const INVENTED_LABEL = 'Invented demo data: no real site, company or person is described.';
