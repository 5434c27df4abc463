/** A half-open range of UTF-16 offsets into the document text. */
export interface Span {
  start: number;
  end: number;
}
