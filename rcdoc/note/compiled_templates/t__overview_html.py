from jinja2.runtime import LoopContext, Macro, Markup, Namespace, TemplateNotFound, TemplateReference, TemplateRuntimeError, Undefined, escape, identity, internalcode, markup_join, missing, str_join
name = '_overview.html'

def root(context, missing=missing, environment=environment):
    resolve = context.resolve_or_missing
    undefined = environment.undefined
    concat = environment.concat
    cond_expr_undefined = Undefined
    if 0: yield None
    l_0_overview_images = resolve('overview_images')
    l_0_charts = missing
    try:
        t_1 = environment.filters['default']
    except KeyError:
        @internalcode
        def t_1(*unused):
            raise TemplateRuntimeError("No filter named 'default' found.")
    try:
        t_2 = environment.filters['figure']
    except KeyError:
        @internalcode
        def t_2(*unused):
            raise TemplateRuntimeError("No filter named 'figure' found.")
    try:
        t_3 = environment.filters['length']
    except KeyError:
        @internalcode
        def t_3(*unused):
            raise TemplateRuntimeError("No filter named 'length' found.")
    pass
    l_0_charts = t_1((undefined(name='overview_images') if l_0_overview_images is missing else l_0_overview_images), [])
    context.vars['charts'] = l_0_charts
    context.exported_vars.add('charts')
    l_1_loop = missing
    for l_1_chart, l_1_loop in LoopContext((undefined(name='charts') if l_0_charts is missing else l_0_charts), undefined):
        _loop_vars = {}
        pass
        yield '<figure class="fig full overview'
        if (environment.getattr(l_1_loop, 'first') and (t_3((undefined(name='charts') if l_0_charts is missing else l_0_charts)) > 1)):
            pass
            yield ' apart'
        yield '">\n  <h3 class="block-title">'
        yield escape(environment.getattr(l_1_chart, 'title'))
        yield '</h3>\n  '
        yield escape(t_2(environment.getattr(l_1_chart, 'image'), environment.getattr(l_1_chart, 'title')))
        yield '\n</figure>\n'
    l_1_loop = l_1_chart = missing

blocks = {}
debug_info = '4=31&5=35&6=39&7=43&8=45'
# jinja2 3.1.6's code of templates/_overview.html, written by tools/compile_templates.py: do not edit.
