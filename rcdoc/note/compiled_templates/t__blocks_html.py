from jinja2.runtime import LoopContext, Macro, Markup, Namespace, TemplateNotFound, TemplateReference, TemplateRuntimeError, Undefined, escape, identity, internalcode, markup_join, missing, str_join
name = '_blocks.html'

def root(context, missing=missing, environment=environment):
    resolve = context.resolve_or_missing
    undefined = environment.undefined
    concat = environment.concat
    cond_expr_undefined = Undefined
    if 0: yield None
    l_0_cell = l_0_data_table = l_0_figure_block = l_0_table_block = l_0_text_block = l_0_blocks = missing
    try:
        t_1 = environment.filters['figure']
    except KeyError:
        @internalcode
        def t_1(*unused):
            raise TemplateRuntimeError("No filter named 'figure' found.")
    try:
        t_2 = environment.filters['keep_units']
    except KeyError:
        @internalcode
        def t_2(*unused):
            raise TemplateRuntimeError("No filter named 'keep_units' found.")
    try:
        t_3 = environment.filters['layout_rows']
    except KeyError:
        @internalcode
        def t_3(*unused):
            raise TemplateRuntimeError("No filter named 'layout_rows' found.")
    try:
        t_4 = environment.filters['length']
    except KeyError:
        @internalcode
        def t_4(*unused):
            raise TemplateRuntimeError("No filter named 'length' found.")
    try:
        t_5 = environment.filters['map']
    except KeyError:
        @internalcode
        def t_5(*unused):
            raise TemplateRuntimeError("No filter named 'map' found.")
    try:
        t_6 = environment.filters['max']
    except KeyError:
        @internalcode
        def t_6(*unused):
            raise TemplateRuntimeError("No filter named 'max' found.")
    try:
        t_7 = environment.filters['string']
    except KeyError:
        @internalcode
        def t_7(*unused):
            raise TemplateRuntimeError("No filter named 'string' found.")
    try:
        t_8 = environment.filters['trim']
    except KeyError:
        @internalcode
        def t_8(*unused):
            raise TemplateRuntimeError("No filter named 'trim' found.")
    try:
        t_9 = environment.tests['defined']
    except KeyError:
        @internalcode
        def t_9(*unused):
            raise TemplateRuntimeError("No test named 'defined' found.")
    try:
        t_10 = environment.tests['none']
    except KeyError:
        @internalcode
        def t_10(*unused):
            raise TemplateRuntimeError("No test named 'none' found.")
    try:
        t_11 = environment.tests['verdict']
    except KeyError:
        @internalcode
        def t_11(*unused):
            raise TemplateRuntimeError("No test named 'verdict' found.")
    pass
    def macro(l_1_value, l_1_kind, l_1_lines):
        t_12 = []
        if l_1_value is missing:
            l_1_value = undefined("parameter 'value' was not provided", name='value')
        if l_1_kind is missing:
            l_1_kind = undefined("parameter 'kind' was not provided", name='kind')
        if l_1_lines is missing:
            l_1_lines = None
        pass
        if t_11(l_1_value):
            pass
            t_12.extend((
                '<td class="verdict"><span class="badge badge-',
                escape(l_1_value),
                '">',
                escape(l_1_value),
                '</span></td>',
            ))
        elif l_1_lines:
            pass
            t_12.extend((
                '<td class="',
                escape(t_8(markup_join(((l_1_kind or ''), ' nw', )))),
                '">',
            ))
            l_2_loop = missing
            for l_2_line, l_2_loop in LoopContext(l_1_lines, undefined):
                _loop_vars = {}
                pass
                t_12.append(
                    escape(l_2_line),
                )
                if (not environment.getattr(l_2_loop, 'last')):
                    pass
                    t_12.append(
                        '<br />',
                    )
            l_2_loop = l_2_line = missing
            t_12.append(
                '</td>',
            )
        else:
            pass
            if ((t_4(t_7(l_1_value)) <= 12) and ('nw' not in (l_1_kind or ''))):
                pass
                l_1_kind = t_8(markup_join((l_1_kind, ' nw', )))
            t_12.append(
                '<td',
            )
            if l_1_kind:
                pass
                t_12.extend((
                    ' class="',
                    escape(l_1_kind),
                    '"',
                ))
            t_12.extend((
                '>',
                escape(t_2(l_1_value, l_1_kind)),
                '</td>',
            ))
        return concat(t_12)
    context.exported_vars.add('cell')
    context.vars['cell'] = l_0_cell = Macro(environment, macro, 'cell', ('value', 'kind', 'lines'), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_columns, l_1_rows, l_1_link_ids, l_1_label_width, l_1_page):
        t_13 = []
        l_1_kinds = resolve('kinds')
        l_1_shares = resolve('shares')
        l_1_column_kinds = resolve('column_kinds')
        l_1_plain = resolve('plain')
        l_1_linked = resolve('linked')
        l_1_column_widths = resolve('column_widths')
        l_1_first = l_1_row_kinds = l_1_row_lines = missing
        if l_1_columns is missing:
            l_1_columns = undefined("parameter 'columns' was not provided", name='columns')
        if l_1_rows is missing:
            l_1_rows = undefined("parameter 'rows' was not provided", name='rows')
        if l_1_link_ids is missing:
            l_1_link_ids = None
        if l_1_label_width is missing:
            l_1_label_width = 0
        if l_1_page is missing:
            l_1_page = None
        pass
        l_1_first = (environment.getattr(l_1_page, 'first') if l_1_page else 0)
        if l_1_page:
            pass
            l_1_kinds = environment.getattr(l_1_page, 'kinds')
            l_1_shares = environment.getattr(l_1_page, 'widths')
        else:
            pass
            l_1_plain = environment.call(context, (undefined(name='column_kinds') if l_1_column_kinds is missing else l_1_column_kinds), l_1_columns, l_1_rows)
            l_1_kinds = (undefined(name='plain') if l_1_plain is missing else l_1_plain)
            if ((l_1_label_width and l_1_rows) and (t_6(environment, t_5(context, t_5(context, t_5(context, l_1_rows, 'first'), 'string'), 'length')) <= l_1_label_width)):
                pass
                l_1_kinds = ([t_8(markup_join((environment.getitem((undefined(name='kinds') if l_1_kinds is missing else l_1_kinds), 0), ' nw', )))] + (undefined(name='kinds') if l_1_kinds is missing else l_1_kinds)[1:])
            l_1_linked = ((not t_10(l_1_link_ids)) and (t_4(l_1_link_ids) > 0))
            l_1_shares = environment.call(context, (undefined(name='column_widths') if l_1_column_widths is missing else l_1_column_widths), l_1_columns, l_1_rows, (undefined(name='kinds') if l_1_kinds is missing else l_1_kinds), (undefined(name='linked') if l_1_linked is missing else l_1_linked))
            if ((not (undefined(name='shares') if l_1_shares is missing else l_1_shares)) and ((undefined(name='kinds') if l_1_kinds is missing else l_1_kinds) != (undefined(name='plain') if l_1_plain is missing else l_1_plain))):
                pass
                l_1_kinds = (undefined(name='plain') if l_1_plain is missing else l_1_plain)
                l_1_shares = environment.call(context, (undefined(name='column_widths') if l_1_column_widths is missing else l_1_column_widths), l_1_columns, l_1_rows, (undefined(name='kinds') if l_1_kinds is missing else l_1_kinds), (undefined(name='linked') if l_1_linked is missing else l_1_linked))
        l_1_row_kinds = (environment.getattr((undefined(name='shares') if l_1_shares is missing else l_1_shares), 'row_kinds') if (undefined(name='shares') if l_1_shares is missing else l_1_shares) else None)
        l_1_row_lines = (environment.getattr((undefined(name='shares') if l_1_shares is missing else l_1_shares), 'row_lines') if (undefined(name='shares') if l_1_shares is missing else l_1_shares) else None)
        t_13.append(
            '<table class="data',
        )
        if (undefined(name='shares') if l_1_shares is missing else l_1_shares):
            pass
            t_13.append(
                ' fixed',
            )
        t_13.append(
            '">\n',
        )
        if (undefined(name='shares') if l_1_shares is missing else l_1_shares):
            pass
            t_13.append(
                '<colgroup>',
            )
            for l_2_share in (undefined(name='shares') if l_1_shares is missing else l_1_shares):
                _loop_vars = {}
                pass
                t_13.extend((
                    '<col style="width: ',
                    escape(l_2_share),
                    '%" />',
                ))
            l_2_share = missing
            t_13.append(
                '</colgroup>',
            )
        t_13.append(
            '  <thead>\n    <tr>',
        )
        l_2_loop = missing
        for l_2_column, l_2_loop in LoopContext(l_1_columns, undefined):
            _loop_vars = {}
            pass
            t_13.append(
                '<th',
            )
            if environment.getitem((undefined(name='kinds') if l_1_kinds is missing else l_1_kinds), environment.getattr(l_2_loop, 'index0')):
                pass
                t_13.extend((
                    ' class="',
                    escape(environment.getitem((undefined(name='kinds') if l_1_kinds is missing else l_1_kinds), environment.getattr(l_2_loop, 'index0'))),
                    '"',
                ))
            t_13.extend((
                '>',
                escape(l_2_column),
                '</th>',
            ))
        l_2_loop = l_2_column = missing
        t_13.append(
            '</tr>\n  </thead>\n  <tbody>',
        )
        if ((undefined(name='first') if l_1_first is missing else l_1_first) % 2):
            pass
            t_13.append(
                '<tr style="display: none"></tr>',
            )
        l_2_loop = missing
        for l_2_row, l_2_loop in LoopContext(l_1_rows, undefined):
            l_2_row_id = l_2_cell_kinds = l_2_cell_lines = missing
            _loop_vars = {}
            pass
            l_2_row_id = (environment.getitem(l_1_link_ids, environment.getattr(l_2_loop, 'index0')) if (l_1_link_ids and (environment.getattr(l_2_loop, 'index0') < t_4(l_1_link_ids))) else None)
            _loop_vars['row_id'] = l_2_row_id
            l_2_cell_kinds = (environment.getitem((undefined(name='row_kinds') if l_1_row_kinds is missing else l_1_row_kinds), ((undefined(name='first') if l_1_first is missing else l_1_first) + environment.getattr(l_2_loop, 'index0'))) if (undefined(name='row_kinds') if l_1_row_kinds is missing else l_1_row_kinds) else (undefined(name='kinds') if l_1_kinds is missing else l_1_kinds))
            _loop_vars['cell_kinds'] = l_2_cell_kinds
            l_2_cell_lines = (environment.getitem((undefined(name='row_lines') if l_1_row_lines is missing else l_1_row_lines), ((undefined(name='first') if l_1_first is missing else l_1_first) + environment.getattr(l_2_loop, 'index0'))) if (undefined(name='row_lines') if l_1_row_lines is missing else l_1_row_lines) else None)
            _loop_vars['cell_lines'] = l_2_cell_lines
            t_13.append(
                '    <tr>',
            )
            l_3_loop = missing
            for l_3_value, l_3_loop in LoopContext(l_2_row, undefined):
                _loop_vars = {}
                pass
                if (environment.getattr(l_3_loop, 'first') and (undefined(name='row_id') if l_2_row_id is missing else l_2_row_id)):
                    pass
                    t_13.extend((
                        '<td class="stage-link"><a href="#stage-',
                        escape((undefined(name='row_id') if l_2_row_id is missing else l_2_row_id)),
                        '">',
                        escape(l_3_value),
                        '</a></td>',
                    ))
                else:
                    pass
                    t_13.append(
                        escape(environment.call(context, (undefined(name='cell') if l_0_cell is missing else l_0_cell), l_3_value, environment.getitem((undefined(name='cell_kinds') if l_2_cell_kinds is missing else l_2_cell_kinds), environment.getattr(l_3_loop, 'index0')), (environment.getitem((undefined(name='cell_lines') if l_2_cell_lines is missing else l_2_cell_lines), environment.getattr(l_3_loop, 'index0')) if (undefined(name='cell_lines') if l_2_cell_lines is missing else l_2_cell_lines) else None), _loop_vars=_loop_vars)),
                    )
            l_3_loop = l_3_value = missing
            t_13.append(
                '</tr>\n',
            )
        l_2_loop = l_2_row = l_2_row_id = l_2_cell_kinds = l_2_cell_lines = missing
        t_13.append(
            '  </tbody>\n</table>',
        )
        return concat(t_13)
    context.exported_vars.add('data_table')
    context.vars['data_table'] = l_0_data_table = Macro(environment, macro, 'data_table', ('columns', 'rows', 'link_ids', 'label_width', 'page'), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_block, l_1_width):
        t_14 = []
        if l_1_block is missing:
            l_1_block = undefined("parameter 'block' was not provided", name='block')
        if l_1_width is missing:
            l_1_width = undefined("parameter 'width' was not provided", name='width')
        pass
        t_14.extend((
            '<figure class="fig ',
            escape(l_1_width),
            '">\n',
        ))
        if (t_9(environment.getattr(l_1_block, 'title')) and environment.getattr(l_1_block, 'title')):
            pass
            t_14.extend((
                '<h3 class="block-title">',
                escape(environment.getattr(l_1_block, 'title')),
                '</h3>',
            ))
        t_14.extend((
            '  ',
            escape(t_1(environment.getattr(l_1_block, 'image'), (environment.getattr(l_1_block, 'title') if t_9(environment.getattr(l_1_block, 'title')) else ''))),
            '\n',
        ))
        if (t_9(environment.getattr(l_1_block, 'caption')) and environment.getattr(l_1_block, 'caption')):
            pass
            t_14.extend((
                '<figcaption>',
                escape(environment.getattr(l_1_block, 'caption')),
                '</figcaption>',
            ))
        t_14.append(
            '</figure>',
        )
        return concat(t_14)
    context.exported_vars.add('figure_block')
    context.vars['figure_block'] = l_0_figure_block = Macro(environment, macro, 'figure_block', ('block', 'width'), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_block):
        t_15 = []
        if l_1_block is missing:
            l_1_block = undefined("parameter 'block' was not provided", name='block')
        pass
        t_15.append(
            '<div class="block table-block',
        )
        if (t_4(environment.getattr(l_1_block, 'rows')) <= 24):
            pass
            t_15.append(
                ' keep',
            )
        t_15.append(
            '">\n',
        )
        if (t_9(environment.getattr(l_1_block, 'title')) and environment.getattr(l_1_block, 'title')):
            pass
            t_15.extend((
                '<h3 class="block-title">',
                escape(environment.getattr(l_1_block, 'title')),
                '</h3>',
            ))
        t_15.extend((
            '  ',
            escape(environment.call(context, (undefined(name='data_table') if l_0_data_table is missing else l_0_data_table), environment.getattr(l_1_block, 'columns'), environment.getattr(l_1_block, 'rows'), label_width=44)),
            '\n',
        ))
        if (t_9(environment.getattr(l_1_block, 'note')) and environment.getattr(l_1_block, 'note')):
            pass
            t_15.extend((
                '<p class="table-note">',
                escape(environment.getattr(l_1_block, 'note')),
                '</p>',
            ))
        t_15.append(
            '</div>',
        )
        return concat(t_15)
    context.exported_vars.add('table_block')
    context.vars['table_block'] = l_0_table_block = Macro(environment, macro, 'table_block', ('block',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_block):
        t_16 = []
        if l_1_block is missing:
            l_1_block = undefined("parameter 'block' was not provided", name='block')
        pass
        t_16.append(
            '<div class="block text-block">\n',
        )
        if (t_9(environment.getattr(l_1_block, 'title')) and environment.getattr(l_1_block, 'title')):
            pass
            t_16.extend((
                '<h3 class="block-title">',
                escape(environment.getattr(l_1_block, 'title')),
                '</h3>',
            ))
        for l_2_paragraph in environment.getattr(l_1_block, 'paragraphs'):
            _loop_vars = {}
            pass
            t_16.extend((
                '  <p>',
                escape(l_2_paragraph),
                '</p>\n',
            ))
        l_2_paragraph = missing
        t_16.append(
            '</div>',
        )
        return concat(t_16)
    context.exported_vars.add('text_block')
    context.vars['text_block'] = l_0_text_block = Macro(environment, macro, 'text_block', ('block',), False, False, False, context.eval_ctx.autoescape)
    yield '\n'
    def macro(l_1_items):
        t_17 = []
        if l_1_items is missing:
            l_1_items = undefined("parameter 'items' was not provided", name='items')
        pass
        for l_2_row in t_3(l_1_items):
            _loop_vars = {}
            pass
            if (t_4(l_2_row) == 2):
                pass
                t_17.extend((
                    '  <div class="fig-pair">',
                    escape(environment.call(context, (undefined(name='figure_block') if l_0_figure_block is missing else l_0_figure_block), environment.getitem(l_2_row, 0), 'half', _loop_vars=_loop_vars)),
                    escape(environment.call(context, (undefined(name='figure_block') if l_0_figure_block is missing else l_0_figure_block), environment.getitem(l_2_row, 1), 'half', _loop_vars=_loop_vars)),
                    '</div>\n',
                ))
            elif (environment.getattr(environment.getitem(l_2_row, 0), 'type') == 'figure'):
                pass
                t_17.extend((
                    '  ',
                    escape(environment.call(context, (undefined(name='figure_block') if l_0_figure_block is missing else l_0_figure_block), environment.getitem(l_2_row, 0), ('half single' if (t_9(environment.getattr(environment.getitem(l_2_row, 0), 'width')) and (environment.getattr(environment.getitem(l_2_row, 0), 'width') == 'half')) else ('full natural' if (t_9(environment.getattr(environment.getitem(l_2_row, 0), 'width')) and (environment.getattr(environment.getitem(l_2_row, 0), 'width') == 'natural')) else 'full')), _loop_vars=_loop_vars)),
                    '\n',
                ))
            elif (environment.getattr(environment.getitem(l_2_row, 0), 'type') == 'table'):
                pass
                t_17.extend((
                    '  ',
                    escape(environment.call(context, (undefined(name='table_block') if l_0_table_block is missing else l_0_table_block), environment.getitem(l_2_row, 0), _loop_vars=_loop_vars)),
                    '\n',
                ))
            elif (environment.getattr(environment.getitem(l_2_row, 0), 'type') == 'text'):
                pass
                t_17.extend((
                    '  ',
                    escape(environment.call(context, (undefined(name='text_block') if l_0_text_block is missing else l_0_text_block), environment.getitem(l_2_row, 0), _loop_vars=_loop_vars)),
                    '\n',
                ))
        l_2_row = missing
        return concat(t_17)
    context.exported_vars.add('blocks')
    context.vars['blocks'] = l_0_blocks = Macro(environment, macro, 'blocks', ('items',), False, False, False, context.eval_ctx.autoescape)

blocks = {}
debug_info = '3=78&4=87&5=91&6=96&8=100&11=121&12=127&16=143&21=163&22=164&23=166&24=167&26=170&27=171&28=172&29=174&33=175&34=176&36=177&37=179&38=180&43=181&44=182&45=186&46=194&48=215&52=237&53=243&54=247&55=249&56=251&58=257&59=260&60=264&62=272&71=286&72=295&73=298&74=307&75=310&79=324&80=332&81=340&82=349&83=352&87=366&89=374&90=381&91=386&96=397&97=402&98=405&100=409&101=410&103=413&104=417&105=420&106=424&107=427&108=431'
# jinja2 3.1.6's code of templates/_blocks.html, written by tools/compile_templates.py: do not edit.
