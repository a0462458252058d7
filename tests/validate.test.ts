import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { InputError, type Problem } from '../src/errors.js';
import type { Framework } from '../src/framework/types.js';
import { checkFramework, parseFramework, validateFramework } from '../src/framework/validate.js';

// Small frameworks written for these tests (invented, not taken from anywhere).

/** Unit square lattice, one joint, bars to its copies one cell along a1 and along a2. */
function square(): Framework {
  return {
    name: 'test square grid',
    description: 'invented test case: one joint per unit square cell',
    lattice: [
      [1, 0],
      [0, 1],
    ],
    joints: [{ id: 'A', at: [0.25, 0.25] }],
    bars: [
      { from: 'A', to: 'A', shift: [1, 0] },
      { from: 'A', to: 'A', shift: [0, 1] },
    ],
  };
}

/** Unit square lattice with two joints A, B and one bar A–B inside the cell. */
function twoJoints(): Record<string, unknown> {
  return {
    lattice: [
      [1, 0],
      [0, 1],
    ],
    joints: [
      { id: 'A', at: [0, 0] },
      { id: 'B', at: [0.5, 0.5] },
    ],
    bars: [{ from: 'A', to: 'B', shift: [0, 0] }],
  };
}

/** Apply `edit` to a fresh copy of `base` and validate it. */
function problemsOf(edit: (fw: any) => void, base: () => unknown = twoJoints): Problem[] {
  const fw = base();
  edit(fw);
  return validateFramework(fw);
}

/** The single problem at `where`; fails the test when there is none or more than one. */
function at(problems: Problem[], where: string): Problem {
  const found = problems.filter((p) => p.where === where);
  expect(found, `problems at ${where} in ${JSON.stringify(problems, null, 1)}`).toHaveLength(1);
  const p = found[0];
  expect(p.what.length).toBeGreaterThan(10);
  expect(p.fix.length).toBeGreaterThan(10);
  return p;
}

function wheres(problems: Problem[]): string[] {
  return problems.map((p) => p.where).sort();
}

describe('valid frameworks', () => {
  it('accepts the square grid, a bar-less framework and long bars', () => {
    expect(validateFramework(square())).toEqual([]);
    expect(problemsOf((fw) => (fw.bars = []))).toEqual([]);
    expect(
      problemsOf((fw) => {
        fw.bars = [
          { from: 'A', to: 'B', shift: [2, 0] },
          { from: 'A', to: 'B', shift: [10, -7] },
          { from: 'B', to: 'B', shift: [-7, 10] },
          { from: 'A', to: 'A', shift: [1, 1] },
          { from: 'A', to: 'A', shift: [1, -1] },
          // same ends as bars[0] but a different shift, and A→B vs B→A with the same shift: distinct bars
          { from: 'B', to: 'A', shift: [2, 0] },
        ];
      }),
    ).toEqual([]);
  });

  it('accepts an oblique lattice whose vectors are close to, but not, parallel', () => {
    // sine of the angle is about 1e-9, far above the 1e-12 threshold
    expect(problemsOf((fw) => (fw.lattice = [[1, 0], [1, 1e-9]]))).toEqual([]);
  });

  it('round-trips through JSON text unchanged', () => {
    const fw = square();
    expect(parseFramework(JSON.stringify(fw))).toStrictEqual(fw);
    const bare = twoJoints() as unknown as Framework;
    expect(parseFramework(JSON.stringify(bare, null, 2))).toStrictEqual(bare);
  });

  it('returns a deep copy, not the input', () => {
    const fw = square();
    const copy = checkFramework(fw);
    expect(copy).toStrictEqual(fw);
    copy.joints[0].at[0] = 99;
    copy.lattice[0][0] = 99;
    copy.bars[0].shift[0] = 99;
    expect(fw.joints[0].at[0]).toBe(0.25);
    expect(fw.lattice[0][0]).toBe(1);
    expect(fw.bars[0].shift[0]).toBe(1);
  });
});

describe('top level and fields', () => {
  it('rejects a top level that is not an object', () => {
    for (const [value, word] of [
      [[1, 2], 'list'],
      [null, 'null'],
      [3, '3'],
      ['lattice', 'lattice'],
    ] as const) {
      const p = at(validateFramework(value), '(top level)');
      expect(p.what).toContain(word);
      expect(p.fix).toContain('"lattice"');
    }
  });

  it('reports each missing required field at its own path', () => {
    const ps = problemsOf((fw) => {
      delete fw.lattice;
      delete fw.joints;
      delete fw.bars;
    });
    expect(wheres(ps)).toEqual(['bars', 'joints', 'lattice']);
    for (const name of ['lattice', 'joints', 'bars']) {
      expect(at(ps, name).what).toContain(`"${name}"`);
      expect(at(ps, name).fix).toContain(`"${name}"`);
    }
  });

  it('names unknown fields at every level and suggests the closest known one', () => {
    const ps = problemsOf((fw) => {
      fw.latice = fw.lattice;
      delete fw.lattice;
      fw.joints[0].pos = fw.joints[0].at;
      delete fw.joints[0].at;
      fw.bars[0].colour = 'red';
    });
    const top = at(ps, 'latice');
    expect(top.what).toContain('"latice"');
    expect(top.fix).toContain('"lattice"');
    // the missing field points at the likely misspelling
    expect(at(ps, 'lattice').fix).toContain('"latice"');
    const joint = at(ps, 'joints[0].pos');
    expect(joint.what).toContain('"pos"');
    expect(joint.fix).toContain('"at"');
    expect(at(ps, 'joints[0].at').fix).toContain('"pos"');
    const bar = at(ps, 'bars[0].colour');
    expect(bar.what).toContain('"colour"');
    // no close match: the fix lists what is allowed
    expect(bar.fix).toContain('"from"');
    expect(bar.fix).toContain('"shift"');
  });

  it('rejects a name or description that is not text', () => {
    const ps = problemsOf((fw) => {
      fw.name = 3;
      fw.description = ['a', 'b'];
    });
    expect(wheres(ps)).toEqual(['description', 'name']);
    expect(at(ps, 'name').what).toContain('3');
    expect(at(ps, 'description').what).toContain('list of 2 items');
  });
});

describe('lattice', () => {
  it('rejects a lattice that is not two vectors of two numbers', () => {
    let p = at(problemsOf((fw) => (fw.lattice = [[1, 0]])), 'lattice');
    expect(p.what).toContain('1 item');
    p = at(problemsOf((fw) => (fw.lattice = 'square')), 'lattice');
    expect(p.what).toContain('"square"');
    p = at(problemsOf((fw) => (fw.lattice = [[1, 0], [0, 1, 2]])), 'lattice[1]');
    expect(p.what).toContain('3 items');
    p = at(problemsOf((fw) => (fw.lattice = [[1, '0'], [0, 1]])), 'lattice[0][1]');
    expect(p.what).toContain('"0"');
    expect(p.fix).toContain('0 without quotes');
  });

  it('rejects numbers that are not finite, including 1e999 in JSON text', () => {
    const text = JSON.stringify(twoJoints()).replace('"lattice":[[1,0]', '"lattice":[[1e999,0]');
    expect(text).toContain('1e999');
    const err = catchInput(() => parseFramework(text));
    const p = at(err.problems, 'lattice[0][0]');
    expect(p.what).toContain('Infinity');
    expect(p.fix).toContain('1e999');
    // made in code: NaN in a joint position
    const q = at(problemsOf((fw) => (fw.joints[1].at = [0.5, NaN])), 'joints[1].at[1]');
    expect(q.what).toContain('NaN');
  });

  it('rejects a zero lattice vector', () => {
    const ps = problemsOf((fw) => (fw.lattice = [[1, 0], [0, 0]]));
    expect(wheres(ps)).toEqual(['lattice[1]']);
    expect(ps[0].what).toContain('a2');
    expect(ps[0].what).toContain('[0, 0]');
  });

  it('rejects lattice vectors that do not span the plane', () => {
    let p = at(problemsOf((fw) => (fw.lattice = [[1, 0], [2, 0]])), 'lattice');
    expect(p.what).toContain('[1, 0]');
    expect(p.what).toContain('[2, 0]');
    expect(p.what).toContain('span');
    // parallel up to rounding: sine of the angle 1e-13 is below the 1e-12 threshold
    p = at(problemsOf((fw) => (fw.lattice = [[1, 0], [1, 1e-13]])), 'lattice');
    expect(p.what).toContain('parallel');
    // scale does not matter: the test is relative
    p = at(problemsOf((fw) => (fw.lattice = [[1e200, 1e200], [-3e-200, -3e-200]])), 'lattice');
    expect(p.what).toContain('parallel');
  });
});

describe('joints', () => {
  it('rejects joints that are not a non-empty list', () => {
    let p = at(problemsOf((fw) => (fw.joints = { A: [0, 0] })), 'joints');
    expect(p.what).toContain('an object');
    p = at(problemsOf((fw) => (fw.joints = [])), 'joints');
    expect(p.what).toContain('empty');
    expect(p.fix).toContain('"id"');
  });

  it('rejects a joint entry that is not an object', () => {
    const p = at(problemsOf((fw) => (fw.joints[1] = 'B')), 'joints[1]');
    expect(p.what).toContain('"B"');
  });

  it('rejects a missing, empty or non-text id', () => {
    let p = at(problemsOf((fw) => delete fw.joints[1].id), 'joints[1].id');
    expect(p.what).toContain('"id"');
    p = at(problemsOf((fw) => (fw.joints[1].id = '')), 'joints[1].id');
    expect(p.what).toContain('""');
    p = at(problemsOf((fw) => (fw.joints[1].id = 5)), 'joints[1].id');
    expect(p.what).toContain('5');
    expect(p.fix).toContain('"5"');
  });

  it('names both indices of a duplicate id', () => {
    const ps = problemsOf((fw) => fw.joints.push({ id: 'A', at: [0.5, 0] }));
    const p = at(ps, 'joints[2].id');
    expect(p.what).toContain('"A"');
    expect(p.what).toContain('joints[0]');
    expect(p.what).toContain('joints[2]');
    expect(p.fix).toMatch(/"A\d"/);
  });

  it('rejects a position that is not two finite numbers', () => {
    let p = at(problemsOf((fw) => (fw.joints[0].at = [1])), 'joints[0].at');
    expect(p.what).toContain('1 item');
    p = at(problemsOf((fw) => (fw.joints[0].at = ['x', 0])), 'joints[0].at[0]');
    expect(p.what).toContain('"x"');
    p = at(problemsOf((fw) => delete fw.joints[0].at), 'joints[0].at');
    expect(p.what).toContain('"A"');
  });

  it('finds two joints at the same place in the same cell', () => {
    const p = at(problemsOf((fw) => (fw.joints[1].at = [0, 0])), 'joints[1].at');
    expect(p.what).toContain('joints[0]');
    expect(p.what).toContain('"B"');
    expect(p.what).toContain('[0, 0]');
  });

  it('finds two joints at the same place in different cells', () => {
    // B = A + 1·a1 − 2·a2 on the unit square lattice
    let p = at(problemsOf((fw) => (fw.joints = [{ id: 'A', at: [0.25, 0.25] }, { id: 'B', at: [1.25, -1.75] }])), 'joints[1].at');
    expect(p.what).toContain('[1, -2]');
    // oblique (triangular) lattice, computed positions: B = A + 2·a1 − 3·a2
    const a1: [number, number] = [1, 0];
    const a2: [number, number] = [0.5, Math.sqrt(3) / 2];
    const A: [number, number] = [0.1, 0.2];
    const B: [number, number] = [A[0] + 2 * a1[0] - 3 * a2[0], A[1] + 2 * a1[1] - 3 * a2[1]];
    p = at(
      problemsOf((fw) => {
        fw.lattice = [a1, a2];
        fw.joints = [
          { id: 'A', at: A },
          { id: 'B', at: B },
        ];
      }),
      'joints[1].at',
    );
    expect(p.what).toContain('[2, -3]');
    // a near miss (1e-6 away from the translate) is a different place
    expect(problemsOf((fw) => (fw.joints[1].at = [1 + 1e-6, 0]))).toEqual([]);
  });
});

describe('bars', () => {
  it('rejects bars that are not a list and entries that are not objects', () => {
    let p = at(problemsOf((fw) => (fw.bars = 'none')), 'bars');
    expect(p.what).toContain('"none"');
    expect(p.fix).toContain('[]');
    p = at(problemsOf((fw) => (fw.bars[0] = ['A', 'B'])), 'bars[0]');
    expect(p.what).toContain('list of 2 items');
  });

  it('rejects missing or non-text bar ends', () => {
    const ps = problemsOf((fw) => {
      delete fw.bars[0].from;
      fw.bars[0].to = 2;
    });
    expect(wheres(ps)).toEqual(['bars[0].from', 'bars[0].to']);
    expect(at(ps, 'bars[0].from').what).toContain('"from"');
    expect(at(ps, 'bars[0].to').what).toContain('2');
  });

  it('rejects a bar end naming an unknown joint and lists the known ids', () => {
    let p = at(problemsOf((fw) => (fw.bars[0].to = 'C')), 'bars[0].to');
    expect(p.what).toContain('"C"');
    expect(p.fix).toContain('"A"');
    expect(p.fix).toContain('"B"');
    // differs only in case: suggested
    p = at(problemsOf((fw) => (fw.bars[0].from = 'b')), 'bars[0].from');
    expect(p.what).toContain('"b"');
    expect(p.fix).toContain('"B" if that is what you meant');
  });

  it('rejects a shift that is not two whole numbers', () => {
    let p = at(problemsOf((fw) => (fw.bars[0].shift = [0.5, 0])), 'bars[0].shift[0]');
    expect(p.what).toContain('0.5');
    expect(p.fix).toContain('integer');
    p = at(problemsOf((fw) => (fw.bars[0].shift = [0, '1'])), 'bars[0].shift[1]');
    expect(p.what).toContain('"1"');
    p = at(problemsOf((fw) => (fw.bars[0].shift = 1)), 'bars[0].shift');
    expect(p.what).toContain('the number 1');
    p = at(problemsOf((fw) => delete fw.bars[0].shift), 'bars[0].shift');
    expect(p.what).toContain('"shift"');
  });

  it('rejects a bar from a joint to itself in the same cell', () => {
    const p = at(problemsOf((fw) => (fw.bars[0] = { from: 'B', to: 'B', shift: [0, 0] })), 'bars[0]');
    expect(p.what).toContain('"B"');
    expect(p.what).toContain('zero length');
  });

  it('rejects a bar whose ends land on the same point', () => {
    // B sits at A + a1, so A → B shifted by −a1 has length zero
    const ps = problemsOf((fw) => {
      fw.joints[1].at = [1, 0];
      fw.bars = [{ from: 'A', to: 'B', shift: [-1, 0] }];
    });
    const p = at(ps, 'bars[0]');
    expect(p.what).toContain('[-1, 0]');
    expect(p.what).toContain('zero length');
    // the coincident joints are reported as well
    expect(at(ps, 'joints[1].at').what).toContain('[1, 0]');
  });

  it('rejects the same bar listed twice, and its reverse', () => {
    let p = at(problemsOf((fw) => fw.bars.push({ from: 'A', to: 'B', shift: [0, 0] })), 'bars[1]');
    expect(p.what).toContain('bars[0]');
    expect(p.what).toContain('bars[1]');
    expect(p.fix).toContain('bars[1]');
    p = at(
      problemsOf((fw) => {
        fw.bars = [
          { from: 'A', to: 'B', shift: [1, -2] },
          { from: 'A', to: 'A', shift: [0, 1] },
          { from: 'B', to: 'A', shift: [-1, 2] },
        ];
      }),
      'bars[2]',
    );
    expect(p.what).toContain('bars[0]');
    expect(p.what).toContain('reverse');
    // a joint joined to its own copy: (A, A, s) and (A, A, −s) are one bar
    p = at(problemsOf((fw) => fw.bars.push({ from: 'A', to: 'A', shift: [-1, 0] }), square), 'bars[2]');
    expect(p.what).toContain('bars[0]');
    expect(p.what).toContain('[-1, 0]');
  });
});

describe('several problems and dependent checks', () => {
  it('reports all problems of one input in one call', () => {
    const ps = problemsOf((fw) => {
      fw.title = 'grid';
      fw.lattice[1] = [0, 'one'];
      fw.joints.push({ id: 'A', at: [0.5, 0] });
      fw.bars.push({ from: 'A', to: 'Z', shift: [0.5, 0] });
      fw.bars.push({ from: 'A', to: 'A', shift: [0, 0] });
    });
    expect(wheres(ps)).toEqual(
      ['title', 'lattice[1][1]', 'joints[2].id', 'bars[1].to', 'bars[1].shift[0]', 'bars[2]'].sort(),
    );
    expect(at(ps, 'title').fix).toContain('"name"');
  });

  it('skips geometry when the lattice is unusable but still checks the rest', () => {
    const ps = problemsOf((fw) => {
      fw.lattice = [[1, 0], [3, 0]];
      fw.joints[1].at = [0, 0]; // would coincide with A
      fw.bars.push({ from: 'A', to: 'B', shift: [0, 0.5] });
    });
    expect(wheres(ps)).toEqual(['bars[1].shift[1]', 'lattice']);
  });

  it('does not report unknown bar ends when joint ids are themselves broken', () => {
    const ps = problemsOf((fw) => {
      fw.joints[1].id = 7;
      fw.bars[0].to = 'C';
    });
    expect(wheres(ps)).toEqual(['joints[1].id']);
  });
});

describe('parseFramework and checkFramework errors', () => {
  it('reports the line and column of a missing comma', () => {
    const lines = [
      '{',
      '  "lattice": [[1, 0], [0, 1]],',
      '  "joints": [{"id": "A" "at": [0, 0]}],',
      '  "bars": []',
      '}',
    ];
    // the second field name on line 3 starts at column 25 (counted by hand)
    for (const eol of ['\n', '\r\n']) {
      const err = catchInput(() => parseFramework(lines.join(eol), 'grid.json'));
      expect(err.message.startsWith('grid.json is not a valid shimmy framework:')).toBe(true);
      expect(err.problems).toHaveLength(1);
      expect(err.problems[0].where).toBe('line 3, column 25');
      expect(err.problems[0].fix).toContain('comma');
    }
  });

  it('locates a trailing comma, which JSON.parse reports without a position', () => {
    const text = ['{', '  "lattice": [[1, 0], [0, 1]],', '  "joints": [{"id": "A", "at": [0, 0]},],', '  "bars": []', '}'].join('\n');
    const p = catchInput(() => parseFramework(text)).problems[0];
    // the "]" after the comma on line 3 is at column 40 (counted by hand)
    expect(p.where).toBe('line 3, column 40');
    expect(p.what).toContain(']');
    expect(p.fix).toContain('trailing comma');
  });

  it('reports empty and truncated text clearly', () => {
    let p = catchInput(() => parseFramework('  \n')).problems[0];
    expect(p.what).toContain('empty');
    p = catchInput(() => parseFramework('{\n  "lattice": [[1, 0],')).problems[0];
    expect(p.where).toBe('line 2, column 22');
    expect(p.what).toContain('end of the text');
  });

  it('reports a field written twice in one object', () => {
    const text = '{"lattice": [[1, 0], [0, 1]],\n"joints": [{"id": "A", "id": "B", "at": [0, 0]}], "bars": []}';
    const p = at(catchInput(() => parseFramework(text)).problems, 'joints[0].id');
    expect(p.what).toContain('"id"');
    expect(p.what).toContain('line 2, column 24');
  });

  it('checkFramework throws an InputError naming the source', () => {
    const fw = square();
    fw.bars[1].shift = [0, 0.25];
    const err = catchInput(() => checkFramework(fw, 'gallery: square'));
    expect(err.message).toContain('gallery: square is not a valid shimmy framework:');
    expect(err.message).toContain('bars[1].shift[1]: ');
    expect(err.problems.map((p) => p.where)).toEqual(['bars[1].shift[1]']);
  });
});

describe('schema/framework.schema.json', () => {
  const schema = JSON.parse(readFileSync(new URL('../schema/framework.schema.json', import.meta.url), 'utf8'));

  it('is a draft 2020-12 schema with our id and title', () => {
    expect(schema.$schema).toBe('https://json-schema.org/draft/2020-12/schema');
    expect(schema.$id).toBe('https://shimmy.invalid/schema/framework.schema.json');
    expect(schema.title).toBe('shimmy framework');
    for (const rule of ['unique', 'span', 'reverse', 'same place', 'finite']) {
      expect(schema.description).toContain(rule);
    }
  });

  it('requires lattice, joints and bars and forbids extra fields at every level', () => {
    expect(schema.type).toBe('object');
    expect([...schema.required].sort()).toEqual(['bars', 'joints', 'lattice']);
    expect(schema.additionalProperties).toBe(false);
    expect(Object.keys(schema.properties).sort()).toEqual(['bars', 'description', 'joints', 'lattice', 'name']);
    const joint = schema.$defs.joint;
    expect(schema.properties.joints.items.$ref).toBe('#/$defs/joint');
    expect(schema.properties.joints.minItems).toBe(1);
    expect(joint.additionalProperties).toBe(false);
    expect([...joint.required].sort()).toEqual(['at', 'id']);
    expect(Object.keys(joint.properties).sort()).toEqual(['at', 'id']);
    const bar = schema.$defs.bar;
    expect(schema.properties.bars.items.$ref).toBe('#/$defs/bar');
    expect(bar.additionalProperties).toBe(false);
    expect([...bar.required].sort()).toEqual(['from', 'shift', 'to']);
    expect(Object.keys(bar.properties).sort()).toEqual(['from', 'shift', 'to']);
    expect(bar.properties.shift.prefixItems.map((s: { type: string }) => s.type)).toEqual(['integer', 'integer']);
    expect(bar.properties.shift.items).toBe(false);
    expect(schema.$defs.vector.items).toBe(false);
  });

  it('describes every field', () => {
    const fields = [
      ...Object.values(schema.properties),
      ...Object.values(schema.$defs.joint.properties),
      ...Object.values(schema.$defs.bar.properties),
    ] as { description?: string }[];
    for (const f of fields) expect(f.description?.length).toBeGreaterThan(10);
  });

  it('lists the same fields the validator accepts', () => {
    // every field the schema names is accepted by the validator ...
    const full = { ...square(), name: 'n', description: 'd' };
    expect(Object.keys(full).sort()).toEqual(Object.keys(schema.properties).sort());
    expect(validateFramework(full)).toEqual([]);
    // ... and a field it does not name is rejected
    expect(validateFramework({ ...full, extra: 1 }).map((p) => p.where)).toEqual(['extra']);
  });
});

function catchInput(f: () => unknown): InputError {
  try {
    f();
  } catch (e) {
    expect(e).toBeInstanceOf(InputError);
    return e as InputError;
  }
  throw new Error('expected an InputError, but nothing was thrown');
}
