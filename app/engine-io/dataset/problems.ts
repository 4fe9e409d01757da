/** At most this many problems are listed; the count of the rest is given. */
export const MAX_PROBLEMS = 20;

/** The problems found in one file, capped at MAX_PROBLEMS with a count of the rest. */
export class Problems {
  readonly list: string[] = [];
  more = 0;
  add(message: string): void {
    if (this.list.length < MAX_PROBLEMS) this.list.push(message);
    else this.more++;
  }
  get any(): boolean {
    return this.list.length > 0;
  }
  get full(): boolean {
    return this.list.length >= MAX_PROBLEMS;
  }
  result(): string[] {
    return this.more > 0 ? [...this.list, `… and ${this.more} more problems of the same kinds.`] : this.list;
  }
}

/** "1 cell", "2,158 cells". */
export function count(n: number, one: string, many = `${one}s`): string {
  return `${n.toLocaleString("en-US")} ${n === 1 ? one : many}`;
}
