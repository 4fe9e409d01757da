/**
 * The population a stored rerun document names: conditions (population.ts), or in documents
 * stored before conditions one column = value (or null for every row). Read through
 * `conditionsOfDocument`, so old documents are filtered and described as before.
 */
import {
  describeCondition,
  populationFromLegacy,
  type PopulationCondition,
  type PopulationStep,
} from "~/engine/population";
import type { LegacyPopulation } from "../plans/planned-model";

export type DocumentPopulation = PopulationCondition[] | LegacyPopulation;

export function conditionsOfDocument(population: DocumentPopulation | undefined): PopulationCondition[] {
  return Array.isArray(population) ? population : populationFromLegacy(population ?? null);
}

/** The population as results show it: each condition with the rows it removed (null in documents stored before counts per condition). */
export function populationStepsOf(doc: {
  population: DocumentPopulation;
  populationSteps?: readonly PopulationStep[];
}): { condition: string; removed: number | null }[] {
  if (doc.populationSteps)
    return doc.populationSteps.map((s) => ({ condition: s.condition, removed: s.removed }));
  return conditionsOfDocument(doc.population).map((c) => ({
    condition: describeCondition(c),
    removed: null,
  }));
}
