from jinja2.runtime import LoopContext, Macro, Markup, Namespace, TemplateNotFound, TemplateReference, TemplateRuntimeError, Undefined, escape, identity, internalcode, markup_join, missing, str_join
name = '_summary.html'

def root(context, missing=missing, environment=environment):
    resolve = context.resolve_or_missing
    undefined = environment.undefined
    concat = environment.concat
    cond_expr_undefined = Undefined
    if 0: yield None
    l_0_summary_page = resolve('summary_page')
    l_0_summary = resolve('summary')
    l_0_ui = resolve('ui')
    l_0_summary_rows = resolve('summary_rows')
    l_0_page = missing
    try:
        t_1 = environment.filters['list']
    except KeyError:
        @internalcode
        def t_1(*unused):
            raise TemplateRuntimeError("No filter named 'list' found.")
    try:
        t_2 = environment.filters['map']
    except KeyError:
        @internalcode
        def t_2(*unused):
            raise TemplateRuntimeError("No filter named 'map' found.")
    try:
        t_3 = environment.tests['defined']
    except KeyError:
        @internalcode
        def t_3(*unused):
            raise TemplateRuntimeError("No test named 'defined' found.")
    pass
    l_0_page = ((undefined(name='summary_page') if l_0_summary_page is missing else l_0_summary_page) if t_3((undefined(name='summary_page') if l_0_summary_page is missing else l_0_summary_page)) else None)
    context.vars['page'] = l_0_page
    context.exported_vars.add('page')
    yield '<section class="summary">\n'
    if ((undefined(name='page') if l_0_page is missing else l_0_page) and environment.getattr((undefined(name='page') if l_0_page is missing else l_0_page), 'first')):
        pass
        yield '  <div class="summary-title" data-title="Summary"></div>\n'
    else:
        pass
        yield '  <h2 class="summary-title" data-title="Summary">Summary</h2>\n'
    if ((undefined(name='summary') if l_0_summary is missing else l_0_summary) and environment.getattr((undefined(name='summary') if l_0_summary is missing else l_0_summary), 'columns')):
        pass
        yield '  '
        yield escape(environment.call(context, environment.getattr((undefined(name='ui') if l_0_ui is missing else l_0_ui), 'data_table'), environment.getattr((undefined(name='summary') if l_0_summary is missing else l_0_summary), 'columns'), t_1(context.eval_ctx, t_2(context, (undefined(name='summary_rows') if l_0_summary_rows is missing else l_0_summary_rows), attribute='cells')), link_ids=t_1(context.eval_ctx, t_2(context, (undefined(name='summary_rows') if l_0_summary_rows is missing else l_0_summary_rows), attribute='id')), page=(undefined(name='page') if l_0_page is missing else l_0_page)))
        yield '\n'
    template = environment.get_template('_overview.html', '_summary.html')
    gen = template.root_render_func(template.new_context(context.get_all(), True, {'page': l_0_page}))
    try:
        for event in gen:
            yield event
    finally: gen.close()
    yield '</section>\n'

blocks = {}
debug_info = '5=34&7=38&12=44&13=47&15=49'
# jinja2 3.1.6's code of templates/_summary.html, written by tools/compile_templates.py: do not edit.
