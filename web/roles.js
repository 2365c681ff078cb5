// Roles of columns, as the study object records them: one id, one group,
// at most one note column, any number of outcomes and covariates.

/** The roles a column can take, with the words the page shows. */
export const ROLES = [
  { id: 'none', label: 'not used' },
  { id: 'id', label: 'id' },
  { id: 'group', label: 'group' },
  { id: 'outcome', label: 'outcome' },
  { id: 'covariate', label: 'covariate' },
  { id: 'notes', label: 'note' },
];

/** The role of `column` in `study`. */
export function roleOf(study, column) {
  const c = study?.columns;
  if (!c) return 'none';
  if (c.id === column) return 'id';
  if (c.group === column) return 'group';
  if (c.notes === column) return 'notes';
  if (c.outcomes.includes(column)) return 'outcome';
  if (c.covariates.includes(column)) return 'covariate';
  return 'none';
}

/** Give `column` the role `role`, taking it from wherever it was. */
export function setRole(study, column, role) {
  const c = study.columns;
  if (c.id === column) c.id = '';
  if (c.group === column) c.group = '';
  if (c.notes === column) c.notes = null;
  c.outcomes = c.outcomes.filter((x) => x !== column);
  c.covariates = c.covariates.filter((x) => x !== column);
  if (role === 'id') c.id = column;
  else if (role === 'group') c.group = column;
  else if (role === 'notes') c.notes = column;
  else if (role === 'outcome') c.outcomes.push(column);
  else if (role === 'covariate') c.covariates.push(column);
}
