// The shape of every vector a method moves, as the plan fixes it before the first round.

/** What the plan says vectors look like: exchange name -> field name -> dimension. */
export type FieldDims = Readonly<Record<string, Readonly<Record<string, number>>>>;
