// A stand-in for the `vscode` module, just large enough to construct the live run panel (src/extension/preview/
// previewPanel.ts) outside VS Code: documents with real text and change events, a webview panel that records what
// the host posts and lets a test send messages, configuration, memento, edits. vitest.config.mts aliases 'vscode' to
// this file for test/hardening only. Behaviour follows the VS Code API reference (code.visualstudio.com/api/references/
// vscode-api) for the members used; anything else is absent on purpose, so a new dependency shows up as a failure.

type Listener<T> = (e: T) => unknown;

export class EventEmitter<T> {
  private listeners = new Set<Listener<T>>();
  readonly event = (l: Listener<T>): { dispose(): void } => {
    this.listeners.add(l);
    return { dispose: () => this.listeners.delete(l) };
  };
  fire(e: T): void {
    for (const l of [...this.listeners]) l(e);
  }
  get size(): number {
    return this.listeners.size;
  }
  dispose(): void {
    this.listeners.clear();
  }
}

export class Uri {
  private constructor(readonly scheme: string, readonly path: string) {}
  static parse(s: string): Uri {
    const m = /^([a-z][a-z0-9+.-]*):(?:\/\/[^/]*)?(.*)$/i.exec(s);
    return m ? new Uri(m[1], m[2] || '/') : new Uri('file', s);
  }
  static file(p: string): Uri {
    return new Uri('file', p);
  }
  static joinPath(base: Uri, ...parts: string[]): Uri {
    return new Uri(base.scheme, [base.path.replace(/\/$/, ''), ...parts].join('/'));
  }
  get fsPath(): string {
    return this.path;
  }
  toString(): string {
    return `${this.scheme}://${this.path}`;
  }
}

export class Position {
  constructor(readonly line: number, readonly character: number) {}
}
export class Range {
  readonly start: Position;
  readonly end: Position;
  constructor(a: Position | number, b: Position | number, c?: number, d?: number) {
    this.start = typeof a === 'number' ? new Position(a, b as number) : a;
    this.end = typeof a === 'number' ? new Position(c as number, d as number) : (b as Position);
  }
}
export class Selection extends Range {}
export class WorkspaceEdit {
  readonly edits: { uri: Uri; range: Range; newText: string }[] = [];
  replace(uri: Uri, range: Range, newText: string): void {
    this.edits.push({ uri, range, newText });
  }
}
export enum ViewColumn { Active = -1, Beside = -2, One = 1, Two = 2 }
export enum TextEditorRevealType { Default = 0, InCenter = 1, InCenterIfOutsideViewport = 2 }
export class Disposable {
  constructor(private readonly fn: () => void) {}
  static from(...ds: { dispose(): unknown }[]): Disposable {
    return new Disposable(() => ds.forEach((d) => d.dispose()));
  }
  dispose(): void {
    this.fn();
  }
}

/** A text document with real content: offsets and positions as VS Code computes them (\n line ends). */
export class FakeDocument {
  version = 1;
  readonly languageId = 'fluxel';
  constructor(readonly uri: Uri, private text: string) {}
  getText(): string {
    return this.text;
  }
  positionAt(offset: number): Position {
    const before = this.text.slice(0, Math.max(0, Math.min(offset, this.text.length)));
    const lines = before.split('\n');
    return new Position(lines.length - 1, lines[lines.length - 1].length);
  }
  offsetAt(p: Position): number {
    const lines = this.text.split('\n');
    let off = 0;
    for (let l = 0; l < p.line && l < lines.length; l++) off += lines[l].length + 1;
    return off + p.character;
  }
  /** Replaces [start, end) and returns the change event VS Code would fire. */
  edit(start: number, end: number, newText: string): { document: FakeDocument; contentChanges: { rangeOffset: number; rangeLength: number; text: string }[]; reason: undefined } {
    this.text = this.text.slice(0, start) + newText + this.text.slice(end);
    this.version++;
    return { document: this, contentChanges: [{ rangeOffset: start, rangeLength: end - start, text: newText }], reason: undefined };
  }
}

export const documents = new Map<string, FakeDocument>();
export const onDidChangeTextDocumentEmitter = new EventEmitter<unknown>();
export const onDidChangeConfigurationEmitter = new EventEmitter<unknown>();
export const settings = new Map<string, unknown>();
export const appliedEdits: WorkspaceEdit[] = [];
export const infoMessages: string[] = [];

export const workspace = {
  onDidChangeTextDocument: onDidChangeTextDocumentEmitter.event,
  onDidChangeConfiguration: onDidChangeConfigurationEmitter.event,
  getConfiguration: (section: string) => ({ get: (key: string) => settings.get(`${section}.${key}`) }),
  openTextDocument: async (uri: Uri) => {
    const d = documents.get(uri.toString());
    if (!d) throw new Error(`no such document ${uri.toString()}`);
    return d;
  },
  applyEdit: async (we: WorkspaceEdit) => {
    appliedEdits.push(we);
    return true;
  },
  getWorkspaceFolder: () => undefined,
  fs: { readFile: async () => { throw new Error('no files in the fake workspace'); } },
};

export const commands = { executeCommand: async () => undefined, registerCommand: () => new Disposable(() => undefined) };
export const window = {
  showInformationMessage: async (m: string) => { infoMessages.push(m); return undefined; },
  showOpenDialog: async () => undefined,
  visibleTextEditors: [] as unknown[],
  showTextDocument: async () => ({ selection: null, revealRange: () => undefined, viewColumn: ViewColumn.One }),
  registerWebviewPanelSerializer: () => new Disposable(() => undefined),
  createWebviewPanel: () => { throw new Error('tests construct FakePanel themselves'); },
};

/** A webview panel: records the page and posted messages; `send` plays the webview posting a message to the host. */
export class FakePanel {
  /** The most recent messages the host posted (a long session would otherwise keep every frame alive). */
  readonly posted: unknown[] = [];
  /** How many messages of each type the host posted in all. */
  readonly counts = new Map<string, number>();
  visible = true;
  active = true;
  title = '';
  iconPath: unknown;
  readonly viewType = 'fluxel.liveRun';
  viewColumn = ViewColumn.Two;
  private readonly receive = new EventEmitter<unknown>();
  private readonly disposed = new EventEmitter<void>();
  private readonly viewState = new EventEmitter<void>();
  readonly webview = {
    options: {} as unknown,
    html: '',
    cspSource: 'https://file+.vscode-resource.vscode-cdn.net',
    asWebviewUri: (u: Uri) => Uri.parse(`https://file+.vscode-resource.vscode-cdn.net${u.path}`),
    onDidReceiveMessage: this.receive.event,
    postMessage: async (m: unknown) => {
      const type = String((m as { type?: unknown })?.type);
      this.counts.set(type, (this.counts.get(type) ?? 0) + 1);
      this.posted.push(m);
      if (this.posted.length > 400) this.posted.splice(0, 200);
      return true;
    },
  };
  readonly onDidDispose = this.disposed.event;
  readonly onDidChangeViewState = this.viewState.event;
  send(m: unknown): void {
    this.receive.fire(m);
  }
  reveal(): void {}
  dispose(): void {
    this.disposed.fire();
    this.disposed.dispose();
    this.receive.dispose();
  }
}

export class Memento {
  private readonly data = new Map<string, unknown>();
  get<T>(key: string): T | undefined {
    return this.data.get(key) as T | undefined;
  }
  async update(key: string, value: unknown): Promise<void> {
    this.data.set(key, value);
  }
  keys(): readonly string[] {
    return [...this.data.keys()];
  }
}
