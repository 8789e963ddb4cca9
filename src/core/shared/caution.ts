/** The screening caution carried by every result view, every export and every report. */
export const CAUTION =
  'Screening only: results that feed remediation or safety decisions need a licensed professional and local regulation.';
