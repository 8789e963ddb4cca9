/** The screening caution carried by every result view and every export. */
export const CAUTION =
  'Screening only: results that feed remediation or safety decisions need a licensed professional and local regulation.';

/** The label added wherever the invented demo data are shown. */
export const INVENTED_LABEL = 'Invented demo data: no real site, company or person is described.';
