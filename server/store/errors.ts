// Errors a store raises that the caller answers in the request's words (server/http-status.ts maps the codes).
import { InputError } from '../../shared/errors.ts';

/** 409 `dataset_changed`: the data set a replacement names was replaced or removed by another request first. */
export function datasetChangedError(projectId: string, datasetId: string): InputError {
  return new InputError(
    `data set ${datasetId} was replaced or removed by another request meanwhile: nothing was changed; list the project's data sets and try again`,
    [{ field: 'replace', problem: `${datasetId} is no longer attached to project ${projectId}` }],
    'dataset_changed',
  );
}
