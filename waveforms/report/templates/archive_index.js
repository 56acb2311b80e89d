(function(){
var tbody=document.getElementById('rows'), sel=document.getElementById('verdict'), txt=document.getElementById('text');
var heads=Array.prototype.slice.call(document.querySelectorAll('th[data-col]'));
function key(td){var v=td.getAttribute('data-v');if(v===null||v==='')return null;var x=Number(v);return isNaN(x)?v.toLowerCase():x;}
function sortBy(i,up){
 var rows=Array.prototype.slice.call(tbody.rows);
 rows.sort(function(a,b){var x=key(a.cells[i]),y=key(b.cells[i]);
  if(x===null&&y===null)return 0;if(x===null)return 1;if(y===null)return -1;
  if(typeof x!==typeof y){x=String(x);y=String(y);}return x<y?-up:x>y?up:0;});
 rows.forEach(function(r){tbody.appendChild(r);});
 heads.forEach(function(th){th.removeAttribute('aria-sort');});
 heads[i].setAttribute('aria-sort',up>0?'ascending':'descending');}
heads.forEach(function(th){th.addEventListener('click',function(){
 var i=Number(th.getAttribute('data-col'));sortBy(i,th.getAttribute('aria-sort')==='ascending'?-1:1);});});
function filt(){var v=sel.value,t=txt.value.toLowerCase(),n=0;
 Array.prototype.forEach.call(tbody.rows,function(r){
  var ok=(v===''||r.getAttribute('data-verdict')===v)&&(t===''||r.textContent.toLowerCase().indexOf(t)>=0);
  r.style.display=ok?'':'none';if(ok)n++;});
 document.getElementById('count').textContent=n;}
sel.addEventListener('change',filt);txt.addEventListener('input',filt);
location.hash.slice(1).split('&').forEach(function(kv){
 var j=kv.indexOf('=');if(j<0)return;var k=kv.slice(0,j),v=decodeURIComponent(kv.slice(j+1));
 if(k==='verdict'){for(var o=0;o<sel.options.length;o++){if(sel.options[o].value===v)sel.value=v;}}
 if(k==='sort'){var up=v.charAt(0)==='-'?-1:1,name=up<0?v.slice(1):v;
  heads.forEach(function(th,i){if(th.getAttribute('data-name')===name)sortBy(i,up);});}});
filt();
})();
