/** Messages between the HTTP thread and the simulation workers. */
export interface JobRequest {
  id: number;
  kind: 'simulate';
  scenario: unknown;
  maxOutputPoints: number;
}

export interface JobReply {
  id: number;
  status: number;
  contentType: string;
  body: string;
}
